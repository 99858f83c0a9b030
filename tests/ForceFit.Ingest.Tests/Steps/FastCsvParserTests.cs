using System.Globalization;
using System.Text;
using ForceFit.Ingest.RunFiles;
using ForceFit.Ingest.Streams;
using ForceFit.Tests.Shared;

namespace ForceFit.Ingest.Tests.Steps;

/// <summary>
/// The chunked CSV reader's fast paths (the shuffled 16-digit vector and the eight-digit SWAR groups, the window passes, the 8 MB chunk cuts) against the
/// runtime's correctly rounded parser, double.Parse: every value bit for bit, every line number, on files large
/// enough to cross many windows and two chunks, with numbers of every length, signs, exponents, CRLF line ends and
/// comment lines mixed in.
/// </summary>
public sealed class FastCsvParserTests : TemporaryFolderTest
{
    private static string RandomNumber(Random r)
    {
        int whole = r.Next(0, 18), fraction = r.Next(0, 18);
        var b = new StringBuilder();
        if (r.Next(3) == 0) b.Append('-');
        for (int i = 0; i < whole; i++) b.Append((char)('0' + r.Next(10)));
        if (fraction > 0 || whole == 0)
        {
            b.Append('.');
            for (int i = 0; i < Math.Max(fraction, 1); i++) b.Append((char)('0' + r.Next(10)));
        }
        if (r.Next(40) == 0) b.Append("e-").Append(r.Next(1, 30)); // exponents take the careful path
        return b.ToString();
    }

    [TestCase(20261202, "\n")]
    [TestCase(20261203, "\r\n")]
    public void Every_value_and_line_agrees_with_the_runtime_parser(int seed, string lineEnd)
    {
        var random = new Random(seed);
        var text = new StringBuilder("t,zp,Ub,extra,f_pll").Append(lineEnd);
        var expected = new List<(long Line, double T, double P, double V, double S)>();
        long line = 2;
        double time = 0;
        // About 10 MB: two 8 MB chunks and hundreds of 32 kB windows.
        while (text.Length < 10_000_000)
        {
            if (random.Next(500) == 0)
            {
                text.Append(random.Next(2) == 0 ? "# a comment, with, commas" : "").Append(lineEnd);
                line++;
                continue;
            }
            time += 0.001 + random.NextDouble();
            string t = time.ToString("R", CultureInfo.InvariantCulture);
            string p = RandomNumber(random), v = RandomNumber(random), x = RandomNumber(random), s = RandomNumber(random);
            text.Append(t).Append(',').Append(p).Append(',').Append(v).Append(',').Append(x).Append(',').Append(s).Append(lineEnd);
            double Parse(string value) => double.Parse(value, CultureInfo.InvariantCulture);
            // _base-run.txt maps zp in nm and Ub in mV.
            expected.Add((line, Parse(t), Parse(p) * 1e-9, Parse(v) * 1e-3, Parse(s)));
            line++;
        }
        File.WriteAllText(Path.Combine(Folder, "run.csv"), text.ToString());
        string toml = File.ReadAllText(Path.Combine(MalformedRunFiles.Folder, "_base-run.txt")).Replace("../data/good.csv", "run.csv");
        File.WriteAllText(Path.Combine(Folder, "run.toml"), toml);
        RunSettings run = RunFileReader.ReadNight(Path.Combine(Folder, "run.toml")).Runs.Single();
        Assert.That(ChunkedCsvSampleSource.Suits(run.DataFile), "plain numbers take the chunked reader");
        using ISampleSource source = SampleSources.Open(run);
        int k = 0, mismatches = 0;
        string? first = null;
        while (source.Next() is { } block)
        {
            for (int i = 0; i < block.Count; i++, k++)
            {
                var e = expected[k];
                bool same = block.LineOf(i) == e.Line && block.Time[i] == e.T && block.Piezo[i] == e.P && block.Bias[i] == e.V && block.Signal[i] == e.S;
                if (!same && mismatches++ == 0)
                    first = $"row {k}: line {block.LineOf(i)} vs {e.Line}, values {block.Time[i]:R} {block.Piezo[i]:R} {block.Bias[i]:R} {block.Signal[i]:R} vs {e.T:R} {e.P:R} {e.V:R} {e.S:R}";
            }
        }
        Assert.That(k, Is.EqualTo(expected.Count));
        Assert.That(mismatches, Is.Zero, first);
    }
}
