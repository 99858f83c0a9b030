using System.Diagnostics;
using ForceFit.Simulation;

namespace ForceFit.Bench;

/// <summary>Simulator throughput: 10 million samples written as CSV (target: at most 10 s on this machine).</summary>
public static class SimulationBenchmark
{
    /// <summary>Simulates one frequency-shift run of about 10^7 samples into a temporary folder and reports the time.</summary>
    public static void Run()
    {
        string folder = Path.Combine(Path.GetTempPath(), "forcefit-bench-sim-" + Environment.ProcessId);
        var scenario = new Scenario { Runs = 1, SampleRate = 10_000, StepDuration = 5.2, Positions = 24, Biases = 7 };
        var request = new SimulationRequest(folder, scenario, 1, false, SimulationRequest.DefaultColumns(scenario.Mode, false));
        var watch = Stopwatch.StartNew();
        NightTruth truth = NightSimulator.Simulate(request);
        watch.Stop();
        long samples = truth.Runs.Sum(r => r.Steps.Sum(s => (long)Math.Round((s.End - s.Start) * scenario.SampleRate)));
        long bytes = new FileInfo(Path.Combine(folder, "run-01.csv")).Length;
        Console.WriteLine($"simulate: {samples / 1e6:F2} million samples, {bytes / 1e6:F0} MB of CSV in {watch.Elapsed.TotalSeconds:F2} s " +
            $"({samples / watch.Elapsed.TotalSeconds / 1e6:F2} million samples/s, {bytes / watch.Elapsed.TotalSeconds / 1e6:F0} MB/s)");
        Directory.Delete(folder, true);
        File.Delete(NightSimulator.TruthPath(folder));
    }
}
