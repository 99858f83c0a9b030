using BenchmarkDotNet.Attributes;
using ForceFit.Core.Constants;
using ForceFit.Theory.Lifshitz;
using ForceFit.Theory.Permittivity;

namespace ForceFit.Bench;

/// <summary>
/// Lifshitz hot path against the targets: 500 separations from 100 nm to 2 um, Drude and plasma at 300 K,
/// pressure and free energy at full accuracy, at most 0.1 s on 2 cores; one separation at most 0.2 ms.
/// </summary>
[MemoryDiagnoser]
public class LifshitzBenchmarks
{
    private static readonly double EV = Codata2018.ElectronVoltAngularFrequency.Value;
    private readonly IPermittivity _drude = new DrudeModel(9.0 * EV, 0.035 * EV);
    private readonly IPermittivity _plasma = new PlasmaModel(9.0 * EV);
    private readonly double[] _separations = Enumerable.Range(0, 500).Select(i => 100e-9 * Math.Pow(20, i / 499.0)).ToArray();
    private LifshitzCalculator _drudeCalculator = null!;
    private LifshitzCalculator _plasmaCalculator = null!;

    /// <summary>Separation for the single-point benchmarks, in nm.</summary>
    [Params(100, 300, 1000, 2000)]
    public double SeparationNm { get; set; }

    /// <summary>Calculators with their permittivity caches filled.</summary>
    [GlobalSetup]
    public void Setup()
    {
        _drudeCalculator = new LifshitzCalculator(_drude, _drude, 300);
        _plasmaCalculator = new LifshitzCalculator(_plasma, _plasma, 300);
        _drudeCalculator.At(100e-9);
        _plasmaCalculator.At(100e-9);
    }

    /// <summary>The whole set from fresh calculators (permittivities computed inside), both cores.</summary>
    [Benchmark]
    public LifshitzResult[] FiveHundredSeparationsTwoModels()
    {
        var calculators = new[] { new LifshitzCalculator(_drude, _drude, 300), new LifshitzCalculator(_plasma, _plasma, 300) };
        var results = new LifshitzResult[2 * _separations.Length];
        Parallel.For(0, results.Length, i => results[i] = calculators[i / _separations.Length].At(_separations[i % _separations.Length]));
        return results;
    }

    /// <summary>One separation, Drude.</summary>
    [Benchmark]
    public LifshitzResult OneSeparationDrude() => _drudeCalculator.At(SeparationNm * 1e-9);

    /// <summary>One separation, plasma.</summary>
    [Benchmark]
    public LifshitzResult OneSeparationPlasma() => _plasmaCalculator.At(SeparationNm * 1e-9);
}
