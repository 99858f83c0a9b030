using System.Diagnostics;
using ForceFit.Core.Constants;
using ForceFit.Theory.Lifshitz;
using ForceFit.Theory.Permittivity;

// Lifshitz hot path (issue targets): 500 separations from 100 nm to 2 um, Drude and plasma at 300 K, pressure
// and free energy at full accuracy: at most 0.1 s on 2 cores; one separation at most 0.2 ms; peak memory < 100 MB.
// Run by hand: dotnet run -c Release --project bench/ForceFit.Bench            (quick figures and peak memory)
//              dotnet run -c Release --project bench/ForceFit.Bench -- --bdn   (BenchmarkDotNet, stable timings)
//              dotnet run -c Release --project bench/ForceFit.Bench -- --simulate   (10 million samples as CSV)
//              dotnet run -c Release --project bench/ForceFit.Bench -- --ingest [night-folder]   (CSV and HDF5 to steps)
//              dotnet run -c Release --project bench/ForceFit.Bench -- --compare [night-folder]  (1000 draws, 2 theories, 60 separations)
//              dotnet run -c Release --project bench/ForceFit.Bench -- --night   (10 runs x 1 million samples, figures excluded)
if (args.Contains("--ingest"))
{
    ForceFit.Bench.IngestBenchmark.Run(args.SkipWhile(a => a != "--ingest").Skip(1).FirstOrDefault());
    return;
}
if (args.Contains("--compare"))
{
    ForceFit.Bench.ComparisonBenchmark.Run(args.SkipWhile(a => a != "--compare").Skip(1).FirstOrDefault());
    return;
}
if (args.Contains("--night"))
{
    ForceFit.Bench.NightBenchmark.Run();
    return;
}
if (args.Contains("--simulate"))
{
    ForceFit.Bench.SimulationBenchmark.Run();
    return;
}
if (args.Contains("--bdn"))
{
    BenchmarkDotNet.Running.BenchmarkRunner.Run<ForceFit.Bench.LifshitzBenchmarks>(args: args.Where(a => a != "--bdn").ToArray());
    return;
}
double eV = Codata2018.ElectronVoltAngularFrequency.Value;
var drude = new DrudeModel(9.0 * eV, 0.035 * eV);
var plasma = new PlasmaModel(9.0 * eV);
double[] separations = Enumerable.Range(0, 500).Select(i => 100e-9 * Math.Pow(20, i / 499.0)).ToArray();
var best = double.MaxValue;
long evaluations = 0;
for (int repeat = 0; repeat < 7; repeat++)
{
    var watch = Stopwatch.StartNew();
    var calculators = new[] { new LifshitzCalculator(drude, drude, 300), new LifshitzCalculator(plasma, plasma, 300) };
    var results = new LifshitzResult[2 * separations.Length];
    Parallel.For(0, results.Length, i => results[i] = calculators[i / separations.Length].At(separations[i % separations.Length]));
    watch.Stop();
    best = Math.Min(best, watch.Elapsed.TotalMilliseconds);
    evaluations = results.Sum(r => (long)r.Evaluations);
}
Console.WriteLine($"500 separations x 2 models, 2 cores: best of 7 = {best:F1} ms; integrand evaluations per separation = {evaluations / 1000.0:F0}");
foreach (double a in new[] { 100e-9, 300e-9, 1e-6, 2e-6 })
{
    foreach ((string name, IPermittivity m) in new (string, IPermittivity)[] { ("Drude", drude), ("plasma", plasma) })
    {
        var calc = new LifshitzCalculator(m, m, 300);
        calc.At(a);
        var w = Stopwatch.StartNew();
        const int n = 200;
        LifshitzResult r = calc.At(a);
        for (int i = 0; i < n; i++) r = calc.At(a * (1 + 1e-9 * i));
        w.Stop();
        Console.WriteLine($"one separation, {name,-6} a = {a * 1e9,6:F0} nm: {w.Elapsed.TotalMilliseconds / n:F3} ms, {r.Evaluations} evaluations, {r.MatsubaraTerms} Matsubara terms");
    }
}
Console.WriteLine($"peak working set: {Process.GetCurrentProcess().PeakWorkingSet64 / 1e6:F0} MB");
