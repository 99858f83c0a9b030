using System.Diagnostics;
using ForceFit.Analysis.Comparison;
using ForceFit.Analysis.Reduction;
using ForceFit.Ingest.RunFiles;
using ForceFit.Simulation;

namespace ForceFit.Bench;

/// <summary>
/// The reduction of a night of 10 runs with about a million samples each (CSV), figures excluded (target 5 s on
/// this 2-core machine, peak memory under 1 GB): steps, calibration with its systematic re-runs, the night's
/// combination; once without the theory comparison and once with it (1000 Monte Carlo draws).
/// </summary>
public static class NightBenchmark
{
    /// <summary>Simulates the night once (kept in the temporary folder) and times its reduction.</summary>
    public static void Run()
    {
        string folder = Path.Combine(Path.GetTempPath(), "forcefit-bench-night-10x1M");
        if (!Directory.Exists(folder))
        {
            // 24 positions x 7 biases of 2 s and the reference steps: about 1.0e6 samples per run at 2.6 kHz.
            var s = new Scenario { Runs = 10, SampleRate = 2600 };
            NightSimulator.Simulate(new SimulationRequest(folder, s, 4242, false, SimulationRequest.DefaultColumns(s.Mode, false)));
        }
        NightSettings night = RunFileReader.ReadNight(folder);
        long bytes = night.Runs.Sum(r => new FileInfo(r.DataFile).Length);
        foreach ((string label, ComparisonOptions options) in new[] { ("without the comparison", new ComparisonOptions(0, 1)), ("with the comparison (1000 draws)", new ComparisonOptions(1000, 1)) })
        {
            var watch = Stopwatch.StartNew();
            NightReduction r = NightPipeline.Reduce(night, options);
            double seconds = watch.Elapsed.TotalSeconds;
            Console.WriteLine($"{night.Runs.Count} runs, {r.Segments.Sum(x => x.Samples) / 1e6:F2} M samples, {bytes / 1e6:F0} MB of CSV, {label}: {seconds:F2} s");
        }
        Console.WriteLine($"peak working set: {Process.GetCurrentProcess().PeakWorkingSet64 / 1e6:F0} MB");
    }
}
