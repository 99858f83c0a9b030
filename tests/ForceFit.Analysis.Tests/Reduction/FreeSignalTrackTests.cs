using ForceFit.Analysis.Reduction;

namespace ForceFit.Analysis.Tests.Reduction;

/// <summary>
/// The free-signal track between references, on injected truth: a linear drift plus a Wiener process of known
/// diffusion D^2, seen through references with white errors. The track's error at a time between references, divided
/// by the sigma the track states for it (reference errors plus the Brownian-bridge variance with the estimated D^2),
/// must have an rms near 1 over many realisations. The layouts are those of the simulator's nights: a distance-ramp
/// run (pairs of references 6 s apart, then a sweep of 84 s without any) and a voltage-step run (one every 16 s).
/// </summary>
public sealed class FreeSignalTrackTests
{
    private sealed record Layout(double[] Times, double[] Sigmas, double[] Probes);

    // Hold (sigma 870 uHz) and the sweep's far stretch (350 uHz) 6 s apart, the far stretch again after the 84 s
    // sweep: 7 biases, 21 references (the ramp night of RampCalibrationPullTests); probes at the middle of each sweep.
    private static Layout Ramps()
    {
        var times = new List<double>();
        var sigmas = new List<double>();
        var probes = new List<double>();
        for (int b = 0; b < 7; b++)
        {
            double t0 = 96 * b;
            times.AddRange([t0 + 1.2, t0 + 7.2, t0 + 91.2]);
            sigmas.AddRange([870e-6, 350e-6, 350e-6]);
            probes.Add(t0 + 49.2);
        }
        return new Layout([.. times], [.. sigmas], [.. probes]);
    }

    // 24 reference steps 16 s apart, sigma 300 uHz; probes half-way between them.
    private static Layout Steps() => new(
        Enumerable.Range(0, 24).Select(i => 16.0 * i).ToArray(),
        Enumerable.Repeat(300e-6, 24).ToArray(),
        Enumerable.Range(0, 23).Select(i => 16.0 * i + 8).ToArray());

    // Realisations of the references and the truth at the probes; returns the pulls at the probes, and the same pulls
    // with the bridge variance built on the moment estimate of D^2 (the point estimate the posterior mean replaces).
    private static (double Rms, double MomentRms, double MeanDiffusion) Pulls(Layout layout, double diffusion, int realisations, int seed)
    {
        var random = new Random(seed);
        double Gauss() => Math.Sqrt(-2 * Math.Log(1 - random.NextDouble())) * Math.Cos(2 * Math.PI * random.NextDouble());
        double sum = 0, momentSum = 0, diffusionSum = 0;
        int count = 0;
        for (int r = 0; r < realisations; r++)
        {
            // The walk at the union of reference and probe times, in time order.
            double[] all = layout.Times.Concat(layout.Probes).Order().ToArray();
            var walk = new Dictionary<double, double>();
            double w = 0, last = all[0];
            foreach (double t in all)
            {
                w += Math.Sqrt(diffusion * (t - last)) * Gauss();
                walk[t] = w;
                last = t;
            }
            const double offset = 25000, rate = 5.6e-6; // Hz, Hz/s: the simulator's linear drift of 0.02 Hz per hour
            double Truth(double t) => offset + rate * t + walk[t];
            var points = layout.Times.Select((t, i) => new FreeSignalPoint(t, Truth(t) + layout.Sigmas[i] * Gauss(), layout.Sigmas[i])).ToArray();
            FreeSignalTrack track = FreeSignalTrack.FromReferences(points);
            diffusionSum += track.Diffusion;
            double moment = MomentEstimate(points);
            foreach (double t in layout.Probes)
            {
                double error = track.At(t) - Truth(t);
                double variance = track.Covariance(t, t);
                sum += error * error / variance;
                // The same track with the moment estimate's bridge variance in place of the posterior mean's.
                double momentVariance = variance + (moment - track.Diffusion) * BridgeFactor(layout.Times, t);
                momentSum += error * error / momentVariance;
                count++;
            }
        }
        return (Math.Sqrt(sum / count), Math.Sqrt(momentSum / count), diffusionSum / realisations);
    }

    // (t − t_a)(t_b − t)/(t_b − t_a) between the references around t (the conditional variance of a Wiener process).
    private static double BridgeFactor(double[] times, double t)
    {
        int hi = Array.FindIndex(times, x => x > t);
        double ta = times[hi - 1], tb = times[hi];
        return (t - ta) * (tb - t) / (tb - ta);
    }

    // The method-of-moments estimate: sum (d_j − r dt_j)^2 − sigma_j^2 − sigma_(j+1)^2 over sum dt_j, r from the ends.
    private static double MomentEstimate(FreeSignalPoint[] p)
    {
        double rate = (p[^1].Value - p[0].Value) / (p[^1].Time - p[0].Time);
        double excess = 0;
        for (int j = 0; j + 1 < p.Length; j++)
        {
            double dt = p[j + 1].Time - p[j].Time;
            excess += Math.Pow(p[j + 1].Value - p[j].Value - rate * dt, 2) - p[j].Sigma * p[j].Sigma - p[j + 1].Sigma * p[j + 1].Sigma;
        }
        return Math.Max(0, excess / (p[^1].Time - p[0].Time));
    }

    [Test]
    public void Track_errors_between_ramp_references_have_unit_pulls_and_the_point_estimate_of_the_walk_does_not()
    {
        // The simulator's random walk of f0: 2e-4 Hz per sqrt(s). The bridge over an 84 s sweep (0.9 mHz at its middle)
        // dominates the references' errors, and only the 7 sweeps inform D^2.
        (double rms, double momentRms, double meanDiffusion) = Pulls(Ramps(), 4e-8, 4000, 20261202);
        TestContext.Out.WriteLine($"ramps: pull rms {rms:F3} (moment estimate {momentRms:F3}); mean D^2 {meanDiffusion:E3} (truth 4e-8)");
        Assert.That(rms, Is.InRange(0.93, 1.07));
        // The test of the test: the point estimate's errors are understated (E[nu/chi^2_nu] = nu/(nu − 2)).
        Assert.That(momentRms, Is.GreaterThan(1.15));
    }

    [Test]
    public void Track_errors_between_step_references_have_unit_pulls()
    {
        (double rms, double momentRms, double meanDiffusion) = Pulls(Steps(), 4e-8, 3000, 20261203);
        TestContext.Out.WriteLine($"steps: pull rms {rms:F3} (moment estimate {momentRms:F3}); mean D^2 {meanDiffusion:E3} (truth 4e-8)");
        Assert.That(rms, Is.InRange(0.93, 1.07));
    }

    [Test]
    public void Without_a_random_walk_the_track_errors_are_not_understated()
    {
        // No walk at all: the stated errors may only be larger than the true ones (the diffusion is at least
        // consistent with zero), by a modest amount.
        (double rms, _, double meanDiffusion) = Pulls(Ramps(), 0, 3000, 20261204);
        TestContext.Out.WriteLine($"no walk: pull rms {rms:F3}; mean D^2 {meanDiffusion:E3}");
        Assert.That(rms, Is.InRange(0.6, 1.05));
    }
}
