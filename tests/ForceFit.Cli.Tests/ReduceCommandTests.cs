using System.Text.Json;
using ForceFit.Cli;
using ForceFit.Core.Problems;
using ForceFit.Simulation;
using ForceFit.Tests.Shared;

namespace ForceFit.Cli.Tests;

/// <summary>`forcefit reduce` end to end on a small simulated night: the report folder, its refusals and atomicity.</summary>
public sealed class ReduceCommandTests : TemporaryFolderTest
{
    private static (int Exit, string Out, string Err) Run(params string[] args)
    {
        var output = new StringWriter();
        var errors = new StringWriter();
        int exit = Commands.Run(args, output, errors);
        return (exit, output.ToString(), errors.ToString());
    }

    private string Night()
    {
        string night = Path.Combine(Folder, "night");
        var scenario = new Scenario { Runs = 1, Positions = 8, Biases = 5, StepDuration = 1.5, SampleRate = 200 };
        NightSimulator.Simulate(new SimulationRequest(night, scenario, 11, false, SimulationRequest.DefaultColumns(scenario.Mode, false)));
        return night;
    }

    [Test]
    public void Reduce_writes_the_documented_files_and_refuses_to_overwrite_without_force()
    {
        string night = Night();
        byte[] before = File.ReadAllBytes(Path.Combine(night, "run-01.csv"));
        string report = Path.Combine(Folder, "report");
        var (exit, output, errors) = Run("reduce", night, "--out", report);
        Assert.That(exit, Is.EqualTo(ExitCodes.Success), errors);
        Assert.That(output, Does.Contain("ok: report written"));
        foreach (string f in new[] { "summary.json", "provenance.json", "report.md", "tables/steps.csv", "tables/parabolas.csv", "tables/reduced.csv", "tables/budget.csv" })
            Assert.That(File.Exists(Path.Combine(report, f)), f);
        using JsonDocument summary = JsonDocument.Parse(File.ReadAllText(Path.Combine(report, "summary.json")));
        JsonElement run = summary.RootElement.GetProperty("runs")[0];
        Assert.That(run.GetProperty("name").GetString(), Is.EqualTo("run-01"));
        Assert.That(run.GetProperty("z0_m").GetProperty("sigma").GetDouble(), Is.GreaterThan(0));
        Assert.That(run.GetProperty("calibration_dof").GetInt32(), Is.GreaterThan(0));
        Assert.That(File.ReadAllLines(Path.Combine(report, "tables", "reduced.csv"))[0],
            Is.EqualTo("run,separation_m,force_gradient_N_per_m,sigma_random,sigma_systematic,equivalent_pressure_Pa"));
        Assert.That(File.ReadAllBytes(Path.Combine(night, "run-01.csv")), Is.EqualTo(before), "raw data unchanged");

        var again = Run("reduce", night, "--out", report);
        Assert.That(again.Exit, Is.EqualTo(ExitCodes.InputError));
        Assert.That(again.Err, Does.Contain("the output folder exists; add --force to replace it"));
        Assert.That(Run("reduce", night, "--out", report, "--force").Exit, Is.EqualTo(ExitCodes.Success));
        Assert.That(Directory.GetDirectories(Folder).Select(Path.GetFileName), Is.EquivalentTo(new[] { "night", "report" }), "no partial folder left");
    }

    [Test]
    public void Reduce_refuses_an_output_folder_inside_the_night()
    {
        string night = Night();
        var (exit, _, errors) = Run("reduce", night, "--out", Path.Combine(night, "report"));
        Assert.That(exit, Is.EqualTo(ExitCodes.InputError));
        Assert.That(errors, Does.Contain("the output folder lies inside the night folder"));
        Assert.That(Directory.Exists(Path.Combine(night, "report")), Is.False);
    }

    [Test]
    public void Reduce_without_out_is_a_usage_error()
    {
        Assert.That(Run("reduce", "somewhere").Exit, Is.EqualTo(ExitCodes.UsageError));
    }
}
