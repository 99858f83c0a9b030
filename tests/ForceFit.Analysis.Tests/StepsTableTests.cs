using System.Globalization;
using ForceFit.Analysis.Tables;
using ForceFit.Ingest.RunFiles;
using ForceFit.Ingest.Steps;
using ForceFit.Simulation;
using ForceFit.Tests.Shared;

namespace ForceFit.Analysis.Tests;

/// <summary>tables/steps.csv: the documented columns, SI values that read back exactly, atomic writing.</summary>
public sealed class StepsTableTests : TemporaryFolderTest
{
    [Test]
    public void Steps_of_a_simulated_night_are_written_with_round_trip_values()
    {
        var scenario = new Scenario { Runs = 2, Positions = 3, Biases = 3, StepDuration = 1.0, SampleRate = 200 };
        string night = Path.Combine(Folder, "night");
        NightTruth truth = NightSimulator.Simulate(new SimulationRequest(night, scenario, 17, false, SimulationRequest.DefaultColumns(scenario.Mode, false)));
        var runs = RunFileReader.ReadNight(night).Runs.Select(r => RunSteps.Read(r)).ToArray();
        string path = Path.Combine(Folder, "report", "tables", "steps.csv");
        StepsTable.Write(path, runs);
        string[] lines = File.ReadAllLines(path);
        Assert.That(lines[0], Is.EqualTo("run,kind,start_s,end_s,piezo_m,bias_V,mean_frequency_Hz,sigma_frequency_Hz,samples_kept"));
        Assert.That(lines, Has.Length.EqualTo(1 + truth.Runs.Sum(r => r.Steps.Count)));
        string[] firstReference = lines.Skip(1).First(l => l.Split(',')[1] == "reference").Split(',');
        SegmentStatistics expected = runs[0].Segments.First(s => s.Kind == SegmentKind.Reference);
        Assert.That(firstReference[0], Is.EqualTo("run-01"));
        Assert.That(double.Parse(firstReference[6], CultureInfo.InvariantCulture), Is.EqualTo(expected.Mean), "round-trip digits");
        Assert.That(int.Parse(firstReference[8], CultureInfo.InvariantCulture), Is.EqualTo(expected.SamplesKept));
        Assert.That(Directory.GetFiles(Path.GetDirectoryName(path)!), Has.Length.EqualTo(1), "no temporary file left");
    }

    [Test]
    public void Writing_twice_gives_the_same_bytes()
    {
        var scenario = new Scenario { Runs = 1, Positions = 3, Biases = 3, StepDuration = 1.0, SampleRate = 200 };
        string night = Path.Combine(Folder, "n");
        NightSimulator.Simulate(new SimulationRequest(night, scenario, 3, false, SimulationRequest.DefaultColumns(scenario.Mode, false)));
        var run = RunFileReader.ReadNight(night).Runs.Single();
        StepsTable.Write(Path.Combine(Folder, "a.csv"), [RunSteps.Read(run)]);
        StepsTable.Write(Path.Combine(Folder, "b.csv"), [RunSteps.Read(run)]);
        Assert.That(File.ReadAllBytes(Path.Combine(Folder, "b.csv")), Is.EqualTo(File.ReadAllBytes(Path.Combine(Folder, "a.csv"))));
    }
}
