using ForceFit.Analysis.Comparison;
using ForceFit.Analysis.Reduction;
using ForceFit.Fitting;
using ForceFit.Ingest.RunFiles;
using ForceFit.Simulation;

namespace ForceFit.Analysis.Tests;

/// <summary>The simulator's true curve for a reduced result, and its chi-square against the result.</summary>
internal static class TruthCurves
{
    /// <summary>The settings' theory inputs with the night's true values put in (the stated uncertainties kept, unused).</summary>
    public static TheoryInputs WithTruth(TheoryInputs stated, TrueInputs t)
    {
        double ev = ForceFit.Core.Units.PhotonEnergy.ElectronVoltsToRadiansPerSecond(1);
        var materials = stated.Materials.ToDictionary(kv => kv.Key, kv => kv.Value with
        {
            PlasmaFrequency = kv.Value.PlasmaFrequency is { } wp ? wp with { Value = t.PlasmaFrequencyEv * ev } : null,
            Damping = kv.Value.Damping is { } g ? g with { Value = t.DampingEv * ev } : null,
        });
        return stated with
        {
            Sphere = new SphereSettings(stated.Sphere.Radius with { Value = t.Radius }),
            Surfaces = stated.Surfaces with
            {
                Temperature = stated.Surfaces.Temperature with { Value = t.Temperature },
                PfaCorrection = stated.Surfaces.PfaCorrection with { Value = t.Theta },
            },
            Materials = materials,
        };
    }

    /// <summary>The true curve: the truth theory with the night's true inputs, force gradient (frequency) or force at a.</summary>
    public static double[] TrueCurve(TheoryInputs stated, NightTruth truth, double[] a, bool frequency)
    {
        int theory = stated.Theories.ToList().FindIndex(t => t.Name == truth.Scenario.TruthTheory);
        return TheoryComparison.Predict(WithTruth(stated, truth.Inputs), a, frequency)[theory];
    }

    /// <summary>
    /// The p-value of (result − true curve) with the result's own covariance (random and experimental systematic):
    /// the true curve is the truth theory with the night's true inputs at the reported separations.
    /// </summary>
    public static double PValueAgainstTruth(CombinedNight c, TheoryInputs stated, NightTruth truth)
    {
        double[] curve = TrueCurve(stated, truth, c.Separation, c.Frequency);
        double[] r = c.Value.Zip(curve, (v, f) => v - f).ToArray();
        double[,] inverse = Matrices.InverseSymmetric(Matrices.Add(c.RandomCovariance, c.SystematicCovariance));
        return Statistics.ChiSquareSurvival(Matrices.Bilinear(r, inverse, r), r.Length);
    }
}

/// <summary>The acceptance rule for pulls (estimate − truth)/sigma over many simulated nights.</summary>
internal static class Pulls
{
    /// <summary>Asserts rms in [0.8, 1.25] and mean within ±0.3 for each named set of pulls, printing both.</summary>
    public static void AssertUnitRms(params (string Name, IEnumerable<double> Values)[] sets)
    {
        foreach (var (name, values) in sets)
        {
            double[] v = values.ToArray();
            double rms = Math.Sqrt(v.Average(x => x * x)), mean = v.Average();
            TestContext.Out.WriteLine($"{name}: pull rms {rms:F3}, mean {mean:F3}");
            Assert.That(rms, Is.InRange(0.8, 1.25), name + " pull rms");
            Assert.That(mean, Is.InRange(-0.3, 0.3), name + " pull mean");
        }
    }

    /// <summary>Prints the rms and mean of a set of pulls and returns them (for quantities outside the rule).</summary>
    public static (double Rms, double Mean) Print(string name, IEnumerable<double> values)
    {
        double[] v = values.ToArray();
        double rms = Math.Sqrt(v.Average(x => x * x)), mean = v.Average();
        TestContext.Out.WriteLine($"{name}: pull rms {rms:F3}, mean {mean:F3}");
        return (rms, mean);
    }
}

/// <summary>One simulated night reduced without the Monte Carlo comparison, with the calibration's pulls against truth.</summary>
/// <param name="Truth">The simulator's truth.</param>
/// <param name="Night">The night's settings as read back.</param>
/// <param name="Reduction">The reduction.</param>
internal sealed record SimulatedNight(NightTruth Truth, NightSettings Night, NightReduction Reduction)
{
    /// <summary>Simulates the scenario with the seed into the folder and reduces the night.</summary>
    public static SimulatedNight Reduce(string folder, Scenario scenario, ulong seed)
    {
        NightTruth truth = NightSimulator.Simulate(new SimulationRequest(folder, scenario, seed, false, SimulationRequest.DefaultColumns(scenario.Mode, false)));
        NightSettings night = RunFileReader.ReadNight(folder);
        return new SimulatedNight(truth, night, NightPipeline.Reduce(night, new ComparisonOptions(0, 1)));
    }

    /// <summary>
    /// Nights with seeds firstSeed, firstSeed + 1, ... simulated and reduced two at a time (one per core), each reduced
    /// to what <paramref name="measure"/> takes from it; results in seed order.
    /// </summary>
    public static T[] ReduceEach<T>(string folder, Scenario scenario, ulong firstSeed, int count, Func<SimulatedNight, T> measure)
    {
        var results = new T[count];
        Parallel.For(0, count, new ParallelOptions { MaxDegreeOfParallelism = 2 }, index =>
            results[index] = measure(Reduce(Path.Combine(folder, "n" + index), scenario, firstSeed + (ulong)index)));
        return results;
    }

    /// <summary>(z0 − truth)/sigma of the first run; z0 is quoted at the mean time of its steps and the truth drifts linearly.</summary>
    public double GapOffsetPull
    {
        get
        {
            RunTruth t = Truth.Runs[0].Run;
            RunCalibration c = Reduction.Runs[0].Calibration;
            return (c.GapOffset.Value - (t.GapOffset + t.GapDriftRate * c.ReferenceTime)) / c.GapOffset.Sigma;
        }
    }

    /// <summary>(k − truth)/sigma of the first run.</summary>
    public double SpringConstantPull
    {
        get
        {
            RunCalibration c = Reduction.Runs[0].Calibration;
            return (c.SpringConstant.Value - Truth.Runs[0].Run.SpringConstant) / c.SpringConstant.Sigma;
        }
    }

    /// <summary>
    /// Deflection mode: the undeflected gap g to the resting separation a* = g − |F(a*)|/k under the true Casimir
    /// force (the true curve; fixed point), where V0 is found (RunGenerator puts V0 at the actual separation).
    /// </summary>
    public double RestingGap(double gap)
    {
        double a = gap;
        for (int it = 0; it < 5; it++)
            a = gap - Math.Abs(TruthCurves.TrueCurve(Night.Runs[0].Theory, Truth, [a], false)[0]) / Truth.Runs[0].Run.SpringConstant;
        return a;
    }

    /// <summary>
    /// (V0 − truth)/sigma at the run's nearest position, at its mean time and true separation (RunGenerator.Gap and
    /// ResidualPotential; in deflection mode the resting separation, about 2 nm closer at the nearest position).
    /// </summary>
    public double ResidualPotentialPull
    {
        get
        {
            RunResult result = Reduction.Runs[0];
            RunTruth t = Truth.Runs[0].Run;
            var (v0, v0Sigma, _, _, _) = NightPipeline.ResidualPotential(result);
            PositionFit nearest = result.Positions.MinBy(p => p.Separation)!;
            double gap = t.GapOffset + t.GapDriftRate * nearest.Time + t.PiezoScale * nearest.Piezo;
            if (Truth.Scenario.Mode == SimulatedMode.Deflection) gap = RestingGap(gap);
            double v0True = t.ResidualPotential + t.ResidualPotentialGapSlope * (gap - t.ReferenceGapForV0) + t.ResidualPotentialTimeSlope * nearest.Time;
            return (v0 - v0True) / v0Sigma;
        }
    }

    /// <summary>(dV0/da − truth)/sigma of the first run's reported V0 line against separation.</summary>
    public double ResidualPotentialSlopePull
    {
        get
        {
            var (_, _, slope, slopeSigma, _) = NightPipeline.ResidualPotential(Reduction.Runs[0]);
            return (slope - Truth.Runs[0].Run.ResidualPotentialGapSlope) / slopeSigma;
        }
    }

    /// <summary>(w − truth)/sigma of the first run's fitted drift of V0 in time (V/s).</summary>
    public double ResidualPotentialDriftPull
    {
        get
        {
            Estimate w = Reduction.Runs[0].Calibration.ResidualPotentialDrift!;
            return (w.Value - Truth.Runs[0].Run.ResidualPotentialTimeSlope) / w.Sigma;
        }
    }

    /// <summary>The p-value of the night's result against the true curve (<see cref="TruthCurves.PValueAgainstTruth"/>).</summary>
    public double CurvePValue => TruthCurves.PValueAgainstTruth(Reduction.Combined, Night.Runs[0].Theory, Truth);
}
