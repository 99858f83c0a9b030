namespace ForceFit.Tests.Shared;

/// <summary>Locates the repository's folders from a test's working directory.</summary>
internal static class RepoPaths
{
    /// <summary>The folder that holds ForceFit.sln.</summary>
    public static string Root { get; } = FindRoot();

    /// <summary>tests/corpus: hand-written inputs, good and malformed.</summary>
    public static string Corpus => Path.Combine(Root, "tests", "corpus");

    /// <summary>
    /// Reference data kept in the repository (tests/reference-data): the NIST StRD files, copied byte for byte
    /// with their SHA-256 sums, so that the tests need nothing outside the checkout.
    /// </summary>
    public static string SharedReferenceData => Path.Combine(Root, "tests", "reference-data");

    private static string FindRoot()
    {
        string? dir = TestContext.CurrentContext.TestDirectory;
        while (dir is not null && !File.Exists(Path.Combine(dir, "ForceFit.sln"))) dir = Path.GetDirectoryName(dir);
        return dir ?? throw new InvalidOperationException("ForceFit.sln not found above the test directory");
    }
}

/// <summary>The expected messages of the malformed run-file corpus (tests/corpus/run-files/expected-messages.txt).</summary>
internal static class MalformedRunFiles
{
    public static string Folder => Path.Combine(RepoPaths.Corpus, "run-files");

    /// <summary>Every malformed file name with its expected messages, {file} and {dir} filled in.</summary>
    public static IEnumerable<TestCaseData> Cases()
    {
        string folder = Folder;
        string? current = null;
        var messages = new List<string>();
        foreach (string raw in File.ReadLines(Path.Combine(folder, "expected-messages.txt")).Append("[end]"))
        {
            string line = raw.TrimEnd();
            if (line.StartsWith('#') || line.Length == 0) continue;
            if (line.StartsWith('[') && line.EndsWith(".toml]") || line == "[end]")
            {
                if (current is not null)
                {
                    string file = Path.Combine(folder, current);
                    yield return new TestCaseData(file, messages.Select(m => m.Replace("{file}", file).Replace("{dir}", folder)).ToArray())
                        .SetName(current);
                }
                current = line == "[end]" ? null : line[1..^1];
                messages = [];
                continue;
            }
            messages.Add(line);
        }
    }
}
