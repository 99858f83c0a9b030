using System.Diagnostics;
using ForceFit.Core.Problems;
using ForceFit.Simulation;
using ForceFit.Tests.Shared;

namespace ForceFit.Cli.Tests;

/// <summary>
/// Ctrl-C for real (issue: hardening): the forcefit process gets SIGINT from `kill -INT` during the Monte Carlo stage,
/// stops within seconds with exit status 130 (128 + SIGINT, the shell convention) and leaves no report folder and no
/// partial folder behind.
/// </summary>
public sealed class InterruptTests : TemporaryFolderTest
{
    [Test]
    public void SIGINT_during_the_Monte_Carlo_stops_promptly_with_130_and_leaves_nothing()
    {
        if (!OperatingSystem.IsLinux() && !OperatingSystem.IsMacOS()) Assert.Ignore("SIGINT by kill(1) needs a Unix system");
        string night = Path.Combine(Folder, "night");
        var scenario = new Scenario { Runs = 1, Positions = 8, Biases = 5, StepDuration = 1.5, SampleRate = 200 };
        NightSimulator.Simulate(new SimulationRequest(night, scenario, 12, false, SimulationRequest.DefaultColumns(scenario.Mode, false)));
        string report = Path.Combine(Folder, "report");
        string tool = typeof(Commands).Assembly.Location; // forcefit.dll beside the tests
        // A process started in the background by a non-interactive shell (as CI may be) inherits SIGINT ignored, and the
        // child would too; GNU env (coreutils 8.31+) resets it to the default before starting dotnet.
        bool reset = DefaultSignalSupported();
        var start = new ProcessStartInfo(reset ? "env" : "dotnet") { RedirectStandardError = true, RedirectStandardOutput = true, UseShellExecute = false };
        foreach (string a in (reset ? new[] { "--default-signal=INT", "dotnet" } : []).Concat([tool, "reduce", night, "--out", report, "--draws", "1000000"])) start.ArgumentList.Add(a);
        using var process = Process.Start(start)!;
        var errors = new System.Text.StringBuilder();
        var inMonteCarlo = new ManualResetEventSlim();
        process.ErrorDataReceived += (_, e) =>
        {
            if (e.Data is null) return;
            lock (errors) errors.AppendLine(e.Data);
            if (e.Data.StartsWith("Monte Carlo:", StringComparison.Ordinal)) inMonteCarlo.Set();
        };
        process.BeginErrorReadLine();
        process.BeginOutputReadLine();
        Assert.That(inMonteCarlo.Wait(TimeSpan.FromSeconds(120)), Is.True, "the Monte Carlo stage started: " + errors);
        var clock = Stopwatch.StartNew();
        using (var kill = Process.Start("kill", ["-INT", process.Id.ToString(System.Globalization.CultureInfo.InvariantCulture)])) kill.WaitForExit();
        bool exited = process.WaitForExit(30_000);
        if (!exited) process.Kill(entireProcessTree: true);
        process.WaitForExit();
        TestContext.Out.WriteLine($"stopped {clock.Elapsed.TotalSeconds:F2} s after SIGINT");
        using var scope = Assert.EnterMultipleScope();
        Assert.That(exited, Is.True, "stopped within 30 s of SIGINT");
        Assert.That(process.ExitCode, Is.EqualTo(ExitCodes.Cancelled), errors.ToString());
        lock (errors) Assert.That(errors.ToString(), Does.Contain("stopped: cancelled"));
        Assert.That(Directory.Exists(report), Is.False, "no report folder");
        Assert.That(Directory.GetDirectories(Folder).Select(Path.GetFileName), Is.EquivalentTo(new[] { "night" }), "no partial folder");
    }

    private static bool DefaultSignalSupported()
    {
        try
        {
            using var probe = Process.Start(new ProcessStartInfo("env", ["--default-signal=INT", "true"]) { RedirectStandardError = true, UseShellExecute = false })!;
            probe.WaitForExit();
            return probe.ExitCode == 0;
        }
        catch (System.ComponentModel.Win32Exception)
        {
            return false;
        }
    }
}
