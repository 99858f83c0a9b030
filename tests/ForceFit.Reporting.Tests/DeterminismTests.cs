using ForceFit.Analysis.Comparison;
using ForceFit.Analysis.Reduction;
using ForceFit.Ingest.RunFiles;
using ForceFit.Simulation;
using ForceFit.Tests.Shared;

namespace ForceFit.Reporting.Tests;

/// <summary>
/// Determinism (issue: hardening): two reductions of the same night at different times give byte-identical tables
/// and summary.json; the time appears only in provenance.json and the report documents; the raw files are unchanged.
/// </summary>
public sealed class DeterminismTests : TemporaryFolderTest
{
    [Test]
    public void Two_reductions_of_one_night_write_the_same_tables_and_summary()
    {
        string night = Path.Combine(Folder, "night");
        var scenario = new Scenario { Runs = 2, Positions = 8, Biases = 5, StepDuration = 1.5, SampleRate = 200 };
        NightSimulator.Simulate(new SimulationRequest(night, scenario, 41, false, SimulationRequest.DefaultColumns(scenario.Mode, false)));
        var before = Directory.GetFiles(night).ToDictionary(f => f, File.ReadAllBytes);
        string[] folders = [Path.Combine(Folder, "first"), Path.Combine(Folder, "second")];
        DateTimeOffset[] times = [new(2026, 12, 1, 6, 0, 0, TimeSpan.Zero), new(2027, 1, 2, 7, 30, 0, TimeSpan.Zero)];
        for (int i = 0; i < 2; i++)
            ReportFolder.Write(NightPipeline.Reduce(RunFileReader.ReadNight(night), new ComparisonOptions(200, 9)), folders[i], false, "forcefit reduce", times[i], "test");
        string[] compared = Directory.GetFiles(Path.Combine(folders[0], "tables")).Select(f => Path.Combine("tables", Path.GetFileName(f))).Append("summary.json").ToArray();
        Assert.That(compared, Has.Length.GreaterThanOrEqualTo(7));
        foreach (string f in compared)
            Assert.That(File.ReadAllBytes(Path.Combine(folders[1], f)), Is.EqualTo(File.ReadAllBytes(Path.Combine(folders[0], f))), f + " is byte-identical");
        Assert.That(File.ReadAllText(Path.Combine(folders[0], "provenance.json")), Does.Contain("2026-12-01T06:00:00Z"));
        Assert.That(File.ReadAllText(Path.Combine(folders[1], "provenance.json")), Does.Contain("2027-01-02T07:30:00Z"));
        foreach (var (file, bytes) in before) Assert.That(File.ReadAllBytes(file), Is.EqualTo(bytes), file + " unchanged");
    }
}
