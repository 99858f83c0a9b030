using System.Diagnostics;
using ForceFit.Analysis.Comparison;
using ForceFit.Analysis.Reduction;
using ForceFit.Ingest.RunFiles;

namespace ForceFit.Bench;

/// <summary>
/// The comparison's hot path against its target: 1000 Monte Carlo draws for 2 theories (Drude and plasma, every
/// stated uncertainty of the bundled example's settings drawn) at 60 separations from 100 nm to 1 um, with the
/// linearisation and both fits, in at most 5 s on this 2-core machine.
/// </summary>
public static class ComparisonBenchmark
{
    /// <summary>Runs the comparison three times (the first warms up) and prints the timings.</summary>
    public static void Run(string? nightFolder)
    {
        string folder = nightFolder ?? Path.Combine(FindRoot(), "example-runs", "tarn-valley-night");
        TheoryInputs inputs = RunFileReader.ReadNight(folder).Runs[0].Theory;
        double[] a = Enumerable.Range(0, 60).Select(i => 100e-9 * Math.Pow(10, i / 59.0)).ToArray();
        double[] value = TheoryComparison.Predict(inputs, a, frequency: true)[0];
        var random = new double[a.Length, a.Length];
        for (int i = 0; i < a.Length; i++) random[i, i] = Math.Pow(1e-3 * value[i] + 3e-8, 2);
        double[] calibration = value.Select(v => 0.005 * v).ToArray();
        var night = new CombinedNight(a, value, random, [new SystematicRow("calibration", "run-01", calibration)],
            Enumerable.Repeat(1, a.Length).ToArray(), new double[a.Length], new double[a.Length], [], true);
        for (int repeat = 0; repeat < 3; repeat++)
        {
            var clock = Stopwatch.StartNew();
            IReadOnlyList<TheoryResult> results = TheoryComparison.Compare(night, inputs, new ComparisonOptions(1000, 1));
            Console.WriteLine($"comparison: 1000 draws, {results.Count} theories, {a.Length} separations: {clock.Elapsed.TotalSeconds:F2} s (target 5 s){(repeat == 0 ? " [first, includes start-up]" : "")}");
        }
        Console.WriteLine($"peak working set {Process.GetCurrentProcess().PeakWorkingSet64 / 1e6:F0} MB");
    }

    private static string FindRoot()
    {
        string? dir = AppContext.BaseDirectory;
        while (dir is not null && !File.Exists(Path.Combine(dir, "ForceFit.sln"))) dir = Path.GetDirectoryName(dir);
        return dir ?? throw new InvalidOperationException("ForceFit.sln not found");
    }
}
