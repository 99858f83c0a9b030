using System.Text.Json;
using System.Text.RegularExpressions;
using ForceFit.Analysis.Comparison;
using ForceFit.Analysis.Reduction;
using ForceFit.Ingest.RunFiles;
using ForceFit.Simulation;
using ForceFit.Tests.Shared;

namespace ForceFit.Reporting.Tests;

/// <summary>
/// The notebook export: the nbformat 4 structure (nbformat.readthedocs.io, "The Notebook file format": top-level
/// nbformat, nbformat_minor, metadata, cells; markdown cells with source; code cells with source, outputs and
/// execution_count; cell ids from 4.5) and every file the notebook reads exists in the report folder.
/// </summary>
public sealed class NotebookExportTests : TemporaryFolderTest
{
    private static void AssertStructure(JsonElement nb)
    {
        Assert.That(nb.GetProperty("nbformat").GetInt32(), Is.EqualTo(4));
        Assert.That(nb.GetProperty("nbformat_minor").GetInt32(), Is.GreaterThanOrEqualTo(5));
        Assert.That(nb.GetProperty("metadata").ValueKind, Is.EqualTo(JsonValueKind.Object));
        var ids = new HashSet<string>();
        foreach (JsonElement cell in nb.GetProperty("cells").EnumerateArray())
        {
            string type = cell.GetProperty("cell_type").GetString()!;
            Assert.That(type, Is.AnyOf("markdown", "code"));
            Assert.That(cell.GetProperty("metadata").ValueKind, Is.EqualTo(JsonValueKind.Object));
            Assert.That(cell.GetProperty("source").EnumerateArray().All(l => l.ValueKind == JsonValueKind.String), "source is a list of strings");
            string id = cell.GetProperty("id").GetString()!;
            Assert.That(Regex.IsMatch(id, "^[a-zA-Z0-9-_]{1,64}$") && ids.Add(id), Is.True, "cell ids are valid and unique");
            if (type == "code")
            {
                Assert.That(cell.GetProperty("outputs").GetArrayLength(), Is.Zero);
                Assert.That(cell.GetProperty("execution_count").ValueKind, Is.EqualTo(JsonValueKind.Null));
            }
        }
    }

    private static string Code(JsonElement nb) => string.Concat(nb.GetProperty("cells").EnumerateArray()
        .Where(c => c.GetProperty("cell_type").GetString() == "code").SelectMany(c => c.GetProperty("source").EnumerateArray().Select(l => l.GetString())));

    [Test]
    public void The_notebook_is_nbformat_4_and_reads_only_files_of_the_report()
    {
        string night = Path.Combine(Folder, "night");
        var scenario = new Scenario { Runs = 1, Positions = 8, Biases = 5, StepDuration = 1.5, SampleRate = 200 };
        NightSimulator.Simulate(new SimulationRequest(night, scenario, 31, false, SimulationRequest.DefaultColumns(scenario.Mode, false)));
        string report = Path.Combine(Folder, "report");
        ReportFolder.Write(NightPipeline.Reduce(RunFileReader.ReadNight(night), new ComparisonOptions(100, 1)), report, false, "test", DateTimeOffset.UnixEpoch, "test");
        string notebook = Path.Combine(Folder, "notebooks", "night.ipynb");
        NotebookExport.Write(report, notebook);
        using JsonDocument doc = JsonDocument.Parse(File.ReadAllText(notebook));
        AssertStructure(doc.RootElement);
        string code = Code(doc.RootElement);
        Assert.That(code, Does.Contain("REPORT = Path(\"../report\")"), "the report folder relative to the notebook");
        var read = Regex.Matches(code, "REPORT / \"([^\"]+)\"").Select(m => m.Groups[1].Value).ToArray();
        Assert.That(read, Is.SupersetOf(NotebookExport.Tables));
        foreach (string file in read) Assert.That(File.Exists(Path.Combine(report, file)), file + " exists in the report");
    }

    [Test]
    public void A_folder_that_is_not_a_report_is_refused_with_the_missing_file()
    {
        var e = Assert.Throws<ForceFit.Core.Problems.InputException>(() => NotebookExport.Write(Folder, Path.Combine(Folder, "x.ipynb")));
        Assert.That(e!.Message, Does.Contain("reduced.csv").And.Contain("is this a report folder"));
        Assert.That(File.Exists(Path.Combine(Folder, "x.ipynb")), Is.False);
    }

    [Test]
    public void The_bundled_example_notebook_is_valid_and_reads_the_example_report()
    {
        using JsonDocument doc = JsonDocument.Parse(File.ReadAllText(Path.Combine(RepoPaths.Root, "notebooks-export", "tarn-valley-night.ipynb")));
        AssertStructure(doc.RootElement);
        string code = Code(doc.RootElement);
        Assert.That(code, Does.Contain("REPORT = Path(\"../report-tarn-valley\")"), "the README's report folder");
        Assert.That(Regex.Matches(code, "REPORT / \"([^\"]+)\"").Select(m => m.Groups[1].Value), Is.SupersetOf(NotebookExport.Tables));
    }
}
