using System.Diagnostics;
using ForceFit.Ingest.RunFiles;
using ForceFit.Ingest.Steps;
using ForceFit.Simulation;

namespace ForceFit.Bench;

/// <summary>
/// Ingest throughput: CSV to step statistics (targets 500 MB/s on one core, 900 MB/s on both), HDF5 (1 GB/s),
/// each also as a ratio to reading the file's bytes; peak memory.
/// </summary>
public static class IngestBenchmark
{
    /// <summary>Simulates a large run (or uses the night folder given) and times the reduction to steps.</summary>
    public static void Run(string? nightFolder)
    {
        bool large = Environment.GetEnvironmentVariable("FORCEFIT_BENCH_4GB") == "1";
        string folder = nightFolder ?? Path.Combine(Path.GetTempPath(), large ? "forcefit-bench-ingest-4gb" : "forcefit-bench-ingest-v2");
        if (nightFolder is null && !Directory.Exists(folder))
        {
            // FORCEFIT_BENCH_4GB=1: about 10^8 samples, a 4.3 GB CSV, for the memory check on a very large night.
            var s = new Scenario { Runs = 1, SampleRate = large ? 100_000 : 10_000, StepDuration = 5.2, Positions = 24, Biases = 7 };
            NightSimulator.Simulate(new SimulationRequest(folder, s, 1, false, SimulationRequest.DefaultColumns(s.Mode, false)));
            // 10^7 samples here too (320 MB): a small file would measure the JIT's warm-up, not the reader.
            var h5 = new Scenario { Runs = 1, SampleRate = 10_000, StepDuration = 5.2, Positions = 24, Biases = 7 };
            NightSimulator.Simulate(new SimulationRequest(folder + "-h5", h5, 1, true, SimulationRequest.DefaultColumns(h5.Mode, true)));
        }
        foreach (string night in new[] { folder, folder + "-h5" }.Where(Directory.Exists))
        {
            RunSettings run = RunFileReader.ReadNight(night).Runs[0];
            long bytes = new FileInfo(run.DataFile).Length;
            var watch = Stopwatch.StartNew();
            using (var stream = File.OpenRead(run.DataFile)) { var buffer = new byte[1 << 20]; while (stream.Read(buffer) > 0) { } }
            double readSeconds = watch.Elapsed.TotalSeconds;
            watch.Restart();
            long count = 0;
            using (var source = ForceFit.Ingest.Streams.SampleSources.Open(run))
            {
                while (source.Next() is { } block) count += block.Count;
            }
            double sourceSeconds = watch.Elapsed.TotalSeconds;
            Console.WriteLine($"  reading and parsing alone: {bytes / sourceSeconds / 1e6:F0} MB/s ({count} samples)");
            watch.Restart();
            RunSegments result = RunSteps.Read(run);
            double seconds = watch.Elapsed.TotalSeconds;
            Console.WriteLine($"{Path.GetFileName(run.DataFile)}: {bytes / 1e6:F0} MB, {result.Samples / 1e6:F2} M samples, {result.Segments.Count} steps: " +
                $"{bytes / seconds / 1e6:F0} MB/s ({seconds:F2} s; reading the bytes alone {bytes / readSeconds / 1e6:F0} MB/s, ratio {readSeconds / seconds:F3}); " +
                $"noise tau {result.Noise.IntegratedTime:F1}");
        }
        Console.WriteLine($"peak working set: {Process.GetCurrentProcess().PeakWorkingSet64 / 1e6:F0} MB");
    }
}
