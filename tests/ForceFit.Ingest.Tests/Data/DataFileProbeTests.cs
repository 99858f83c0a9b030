using ForceFit.Core.Problems;
using ForceFit.Ingest.Data;
using ForceFit.Ingest.RunFiles;
using ForceFit.Tests.Shared;
using PureHDF;

namespace ForceFit.Ingest.Tests.Data;

/// <summary>Confirming mapped columns in CSV/TSV headers and HDF5 dataset paths.</summary>
public sealed class DataFileProbeTests : TemporaryFolderTest
{
    private string RunFile(string data, string columns)
    {
        string baseRun = File.ReadAllText(Path.Combine(MalformedRunFiles.Folder, "_base-run.txt"));
        string text = baseRun.Replace("data = \"../data/good.csv\"", $"data = \"{data}\"");
        text = text[..text.IndexOf("[columns]", StringComparison.Ordinal)] + columns;
        string path = Path.Combine(Folder, "run-h5.toml");
        File.WriteAllText(path, text);
        return path;
    }

    private const string H5Columns = """
        [columns]
        time = { name = "raw/t", unit = "s" }
        piezo = { name = "raw/zp", unit = "nm" }
        bias = { name = "/raw/Ub", unit = "mV" }
        frequency = { name = "raw/f_pll", unit = "Hz" }
        """;

    private void WriteH5(params string[] names)
    {
        var raw = new H5Group();
        foreach (string name in names) raw[name] = new double[] { 0.0, 0.1, 0.2 };
        var file = new H5File { ["raw"] = raw, ["note"] = new double[,] { { 1, 2 }, { 3, 4 } } };
        file.Write(Path.Combine(Folder, "run.h5"));
    }

    [Test]
    public void Hdf5_datasets_addressed_by_path_are_found_with_or_without_the_leading_slash()
    {
        WriteH5("t", "zp", "Ub", "f_pll");
        NightSettings night = NightCheck.Run(RunFile("run.h5", H5Columns));
        Assert.That(night.Runs.Single().DataFile, Does.EndWith("run.h5"));
        DataFileHeader header = DataFileProbe.ReadHeader(night.Runs[0].DataFile);
        // Only 1-D datasets are channels; the 2-D "note" is not offered.
        Assert.That(header.Columns, Is.EqualTo(new[] { "raw/t", "raw/zp", "raw/Ub", "raw/f_pll" }));
    }

    [Test]
    public void A_missing_hdf5_dataset_is_named_with_the_available_ones()
    {
        WriteH5("t", "zp", "Ub", "f");
        string run = RunFile("run.h5", H5Columns);
        var e = Assert.Throws<InputException>(() => NightCheck.Run(run))!;
        string h5 = Path.Combine(Folder, "run.h5");
        Assert.That(e.Problems.Single().ToString(), Is.EqualTo(
            $"{h5}: 1-D dataset 'raw/f_pll' mapped to frequency in {run} is not in the file; available: raw/t, raw/zp, raw/Ub, raw/f"));
    }

    [Test]
    public void A_file_that_is_not_hdf5_is_reported_as_such()
    {
        File.WriteAllText(Path.Combine(Folder, "run.h5"), "t,zp\n1,2\n");
        string run = RunFile("run.h5", H5Columns);
        var e = Assert.Throws<InputException>(() => NightCheck.Run(run))!;
        Assert.That(e.Problems.Single().ToString(), Does.StartWith($"{Path.Combine(Folder, "run.h5")}: not a readable HDF5 file: "));
    }

    [TestCase("t,zp,Ub,f_pll", ',')]
    [TestCase("t;zp;Ub;f_pll", ';')]
    [TestCase("t\tzp\tUb\tf_pll", '\t')]
    [TestCase("\"t\";\"zp, nm\";\"Ub\";\"f_pll\"", ';')]
    public void The_delimiter_is_detected_from_the_header_line(string header, char expected)
    {
        Assert.That(DataFileProbe.DetectDelimiter(header), Is.EqualTo(expected));
        Assert.That(DataFileProbe.SplitHeader(header, expected), Has.Count.EqualTo(4));
    }

    [Test]
    public void Comment_lines_and_quoted_headers_are_handled()
    {
        string csv = Path.Combine(Folder, "run.csv");
        File.WriteAllText(csv, "# logger v2\n\n# columns below\n\"t\";\"zp, raw\";\"Ub\";\"f \"\"pll\"\"\"\n1;2;3;4\n");
        DataFileHeader h = DataFileProbe.ReadHeader(csv);
        Assert.That(h.HeaderLine, Is.EqualTo(4));
        Assert.That(h.Delimiter, Is.EqualTo(';'));
        Assert.That(h.Columns, Is.EqualTo(new[] { "t", "zp, raw", "Ub", "f \"pll\"" }));
    }

    [Test]
    public void An_empty_data_file_is_reported()
    {
        string csv = Path.Combine(Folder, "empty.csv");
        File.WriteAllText(csv, "# nothing here\n");
        var e = Assert.Throws<InputException>(() => DataFileProbe.ReadHeader(csv))!;
        Assert.That(e.Problems.Single().ToString(), Is.EqualTo($"{csv}: the file is empty: no header line"));
    }
}
