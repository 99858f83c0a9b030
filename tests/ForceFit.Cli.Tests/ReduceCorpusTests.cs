using ForceFit.Core.Problems;
using ForceFit.Tests.Shared;

namespace ForceFit.Cli.Tests;

/// <summary>
/// The corpus of malformed nights (tests/corpus/reduce, issue: hardening): each case is reduced from a copy, must end
/// with the exit status and the messages of tests/corpus/reduce/expected.txt, must leave no report folder and no
/// partial folder behind, and must leave its input bytes unchanged.
/// </summary>
public sealed class ReduceCorpusTests : TemporaryFolderTest
{
    private static string CorpusFolder => Path.Combine(RepoPaths.Corpus, "reduce");

    /// <summary>Every case of expected.txt: name, exit status, message lines.</summary>
    public static IEnumerable<TestCaseData> Cases()
    {
        string? name = null;
        int exit = -1;
        var lines = new List<string>();
        foreach (string raw in File.ReadLines(Path.Combine(CorpusFolder, "expected.txt")).Append("[end]"))
        {
            string line = raw.TrimEnd();
            if (line.StartsWith('#') || line.Length == 0) continue;
            if (line.StartsWith('[') && line.EndsWith(']'))
            {
                if (name is not null) yield return new TestCaseData(name, exit, lines.ToArray()).SetName(name);
                name = line == "[end]" ? null : line[1..^1];
                exit = -1;
                lines = [];
            }
            else if (line.StartsWith("exit ", StringComparison.Ordinal)) exit = int.Parse(line[5..], System.Globalization.CultureInfo.InvariantCulture);
            else lines.Add(line);
        }
    }

    [Test]
    public void The_corpus_has_forty_cases_and_every_folder_is_listed()
    {
        var listed = Cases().Select(c => (string)c.Arguments[0]!).ToArray();
        Assert.That(listed, Has.Length.GreaterThanOrEqualTo(40));
        Assert.That(Directory.GetDirectories(CorpusFolder).Select(Path.GetFileName), Is.EquivalentTo(listed));
    }

    [TestCaseSource(nameof(Cases))]
    public void A_malformed_night_gets_its_message_and_exit_status_and_leaves_nothing(string name, int exit, string[] messages)
    {
        string night = Path.Combine(Folder, name);
        CopyFolder(Path.Combine(CorpusFolder, name), night);
        var before = Directory.GetFiles(night, "*", SearchOption.AllDirectories).ToDictionary(f => f, File.ReadAllBytes);
        string outFolder = Path.Combine(Folder, name + "-report");
        if (File.Exists(Path.Combine(night, "OUT-IS-A-FILE"))) File.WriteAllText(outFolder, "x\n");
        if (File.Exists(Path.Combine(night, "OUT-INSIDE"))) outFolder = Path.Combine(night, "report");
        var errors = new StringWriter();
        int status = Commands.Run(["reduce", night, "--out", outFolder, "--quiet", "--draws", "20"], new StringWriter(), errors);
        string text = errors.ToString();
        using var scope = Assert.EnterMultipleScope();
        Assert.That(status, Is.EqualTo(exit), text);
        foreach (string m in messages) Assert.That(text, Does.Contain(m.Replace("{out}", outFolder).Replace("{dir}", night)));
        if (!File.Exists(Path.Combine(night, "OUT-IS-A-FILE"))) Assert.That(Directory.Exists(outFolder) || File.Exists(outFolder), Is.False, "no report folder");
        else Assert.That(File.ReadAllText(outFolder), Is.EqualTo("x\n"), "the file in the way is untouched");
        Assert.That(Directory.GetDirectories(Folder, "*.partial-*", SearchOption.AllDirectories), Is.Empty, "no partial folder");
        Assert.That(Directory.GetDirectories(Folder, ".*", SearchOption.AllDirectories), Is.Empty, "no hidden temporary folder");
        foreach (var (file, bytes) in before) Assert.That(File.ReadAllBytes(file), Is.EqualTo(bytes), file + " unchanged");
    }

    private static void CopyFolder(string from, string to)
    {
        Directory.CreateDirectory(to);
        foreach (string dir in Directory.GetDirectories(from, "*", SearchOption.AllDirectories)) Directory.CreateDirectory(dir.Replace(from, to));
        foreach (string file in Directory.GetFiles(from, "*", SearchOption.AllDirectories)) File.Copy(file, file.Replace(from, to));
    }
}
