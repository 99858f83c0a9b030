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
        foreach (string f in new[] { "summary.json", "provenance.json", "report.md", "report.html", "figures/result.svg", "figures/result.png", "tables/steps.csv", "tables/parabolas.csv", "tables/reduced.csv", "tables/budget.csv", "tables/calibration-budget.csv", "tables/theory.csv", "tables/run-points.csv" })
            Assert.That(File.Exists(Path.Combine(report, f)), f);
        using JsonDocument summary = JsonDocument.Parse(File.ReadAllText(Path.Combine(report, "summary.json")));
        JsonElement run = summary.RootElement.GetProperty("runs")[0];
        Assert.That(run.GetProperty("name").GetString(), Is.EqualTo("run-01"));
        Assert.That(run.GetProperty("z0_m").GetProperty("sigma").GetDouble(), Is.GreaterThan(0));
        Assert.That(run.GetProperty("calibration_dof").GetInt32(), Is.GreaterThan(0));
        Assert.That(File.ReadAllLines(Path.Combine(report, "tables", "reduced.csv"))[0],
            Does.StartWith("separation_m,force_gradient_N_per_m,sigma_random,sigma_systematic,equivalent_pressure_Pa"), "run-files.md columns first");
        JsonElement comparison = summary.RootElement.GetProperty("comparison");
        Assert.That(comparison.EnumerateArray().Select(c => c.GetProperty("theory").GetString()), Is.EqualTo(new[] { "Drude", "plasma" }));
        foreach (JsonElement c in comparison.EnumerateArray())
        {
            Assert.That(c.GetProperty("dof").GetInt32(), Is.EqualTo(File.ReadAllLines(Path.Combine(report, "tables", "reduced.csv")).Length - 1));
            Assert.That(c.GetProperty("p_value").GetDouble(), Is.InRange(0.0, 1.0));
        }
        Assert.That(File.ReadAllLines(Path.Combine(report, "tables", "theory.csv"))[0], Does.StartWith("theory,separation_m,value,band_low,band_high"));
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
    public void Progress_goes_to_standard_error_and_quiet_silences_it()
    {
        string night = Night();
        var loud = Run("reduce", night, "--out", Path.Combine(Folder, "a"), "--draws", "100");
        Assert.That(loud.Exit, Is.EqualTo(ExitCodes.Success), loud.Err);
        Assert.That(loud.Err, Does.Contain("ingest:").And.Contain("Monte Carlo: 100%"));
        var quiet = Run("reduce", night, "--out", Path.Combine(Folder, "b"), "--draws", "100", "--quiet");
        Assert.That(quiet.Exit, Is.EqualTo(ExitCodes.Success));
        Assert.That(quiet.Err, Is.Empty);
    }

    [Test]
    public void A_cancelled_reduction_exits_130_and_leaves_no_folder()
    {
        string night = Night();
        using var cancel = new CancellationTokenSource();
        cancel.Cancel();
        var errors = new StringWriter();
        int exit = Commands.Run(["reduce", night, "--out", Path.Combine(Folder, "report")], new StringWriter(), errors, false, cancel.Token);
        Assert.That(exit, Is.EqualTo(ExitCodes.Cancelled));
        Assert.That(errors.ToString(), Does.Contain("stopped: cancelled"));
        Assert.That(Directory.GetDirectories(Folder).Select(Path.GetFileName), Is.EquivalentTo(new[] { "night" }), "no report and no partial folder");
    }

    [Test]
    public void Notebook_writes_a_notebook_beside_the_report()
    {
        string night = Night();
        string report = Path.Combine(Folder, "report");
        Assert.That(Run("reduce", night, "--out", report, "--draws", "50", "--quiet").Exit, Is.EqualTo(ExitCodes.Success));
        var (exit, output, _) = Run("notebook", report);
        Assert.That(exit, Is.EqualTo(ExitCodes.Success));
        Assert.That(output, Does.Contain("ok: notebook written"));
        Assert.That(File.Exists(Path.Combine(report, "notebook.ipynb")));
        Assert.That(Run("notebook", Folder).Exit, Is.EqualTo(ExitCodes.InputError), "not a report folder");
    }

    [Test]
    public void Reduce_without_out_is_a_usage_error()
    {
        Assert.That(Run("reduce", "somewhere").Exit, Is.EqualTo(ExitCodes.UsageError));
    }
}
