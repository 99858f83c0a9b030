using ForceFit.Analysis.Reduction;

namespace ForceFit.Analysis.Tests.Reduction;

/// <summary>
/// The Gauss rule of a lagged ramp window against the filters themselves: the per-sample filter
/// y_n = x_n + rho (y_(n−1) − x_n) of the simulator run on a quintic M (for which the rule is exact), and the continuous
/// first-order filter, whose steady-state response to a quadratic x(t) is y = x − tau x' + tau^2 x'' (solution of
/// tau y' + y = x, analytic).
/// </summary>
public sealed class LaggedWindowTests
{
    // A window of the simulator's ramp: 200 samples/s, 40 nm/s, tau = 30 ms.
    private const double Dt = 0.005, Speed = -40e-9, Tau = 0.03;
    private static double M(double r) => 3.0 + 2e8 * r + 7e16 * r * r;

    // A quintic in the reading (about 1 um), for which the three-point rule is exact.
    private static double Quintic(double r)
    {
        double x = (r - 1e-6) / 1e-7;
        return 3.0 + 0.2 * x + 0.07 * x * x - 0.011 * x * x * x + 0.003 * x * x * x * x - 0.0007 * x * x * x * x * x;
    }

    // Filters M along a sweep from far back (rho^400 ~ 1e-29, the start forgotten), then averages the last `window`
    // samples; returns the mean signal and the window's readings.
    private static (double Mean, double[] Readings) Filtered(Func<double, double> m, double rho, int window, double start, double speed)
    {
        const int n = 620;
        double Reading(int i) => start + speed * i * Dt;
        double y = m(Reading(0)), sum = 0;
        var readings = new List<double>();
        for (int i = 1; i < n; i++)
        {
            double x = m(Reading(i));
            y = x + (y - x) * rho;
            if (i < n - window) continue;
            sum += y;
            readings.Add(Reading(i));
        }
        return (sum / window, readings.ToArray());
    }

    [Test]
    public void The_rule_with_the_geometric_delay_matches_the_per_sample_filter_to_rounding()
    {
        double rho = Math.Exp(-Dt / Tau);
        double lag = Dt * rho / (1 - rho);
        // A wide window (200 samples, 40 nm of reading), where the readings' fourth moment matters.
        var (mean, readings) = Filtered(Quintic, rho, 200, 1.07e-6, Speed);
        double r = readings.Average();
        var moments = ReadingMoments.OfBins([(0.0, readings.Length, Math.Abs(Speed) * Dt)]);
        double rule = LaggedWindow.Rule(r, moments, Speed, lag, Dt).Apply(Quintic);
        TestContext.Out.WriteLine($"rule − filtered {rule / mean - 1:E2}");
        Assert.That(rule, Is.EqualTo(mean).Within(1e-12 * Math.Abs(mean)));
        // The test of the test: the continuous filter's delay (dt = 0) misses.
        double continuous = LaggedWindow.Rule(r, moments, Speed, lag, 0).Apply(Quintic);
        Assert.That(Math.Abs(continuous - mean), Is.GreaterThan(1e-9 * Math.Abs(mean)));
    }

    [Test]
    public void Bins_moments_combine_to_the_moments_of_their_samples()
    {
        // Three bins of 7, 10 and 4 samples spaced 0.3 nm, their centres at −2, 0.5 and 3 nm: moments of the 21 readings.
        var bins = new (double Centre, int Count)[] { (-2e-9, 7), (0.5e-9, 10), (3e-9, 4) };
        const double spacing = 0.3e-9;
        double[] samples = bins.SelectMany(b => Enumerable.Range(0, b.Count).Select(k => b.Centre + spacing * (k - (b.Count - 1) / 2.0))).ToArray();
        double mean = samples.Average();
        double Central(int k) => samples.Average(x => Math.Pow(x - mean, k));
        var m = ReadingMoments.OfBins(bins.Select(b => (b.Centre - mean, b.Count, spacing)));
        using var scope = Assert.EnterMultipleScope();
        Assert.That(m.Second, Is.EqualTo(Central(2)).Within(1e-12 * Central(2)));
        Assert.That(m.Third, Is.EqualTo(Central(3)).Within(1e-10 * Math.Abs(Central(3))));
        Assert.That(m.Fourth, Is.EqualTo(Central(4)).Within(1e-12 * Central(4)));
        Assert.That(m.Fifth, Is.EqualTo(Central(5)).Within(1e-10 * Math.Abs(Central(5))));
    }

    [Test]
    public void The_rule_of_a_uniform_window_is_three_point_Gauss_Legendre()
    {
        // Uniform on [−w/2, w/2]: mu2 = w^2/12, mu4 = w^4/80; Gauss–Legendre nodes 0, ±sqrt(3/5) w/2, weights 8/18 and
        // 5/18 each (Abramowitz and Stegun, Table 25.4, scaled to a unit mass).
        const double w = 2.0;
        WindowRule rule = LaggedWindow.Rule(0, new ReadingMoments(w * w / 12, 0, Math.Pow(w, 4) / 80, 0), 0, 0, 0);
        double[] nodes = [rule.X0, rule.X1, rule.X2];
        double[] weights = [rule.W0, rule.W1, rule.W2];
        int centre = Array.IndexOf(nodes, nodes.MinBy(Math.Abs));
        using var scope = Assert.EnterMultipleScope();
        Assert.That(nodes.Select(Math.Abs).Max(), Is.EqualTo(Math.Sqrt(0.6)).Within(1e-12));
        Assert.That(nodes[centre], Is.EqualTo(0).Within(1e-12));
        Assert.That(weights[centre], Is.EqualTo(8.0 / 18).Within(1e-12));
        Assert.That(weights.Sum(), Is.EqualTo(1).Within(1e-14));
    }

    [Test]
    public void The_rule_with_step_zero_matches_the_continuous_filter()
    {
        // x(t) = M(r0 + u t) = c0 + c1 t + c2 t^2; steady state y = x − tau x' + tau^2 x'' (analytic); the window
        // is one instant (no spread of readings).
        double r0 = 1e-6, t = 0.7;
        double c1 = 2e8 * Speed + 2 * 7e16 * r0 * Speed, c2 = 7e16 * Speed * Speed;
        double x = M(r0 + Speed * t), dx = c1 + 2 * c2 * t, ddx = 2 * c2;
        double filtered = x - Tau * dx + Tau * Tau * ddx;
        double rule = LaggedWindow.Rule(r0 + Speed * t, default, Speed, Tau, 0).Apply(M);
        Assert.That(rule, Is.EqualTo(filtered).Within(1e-13 * Math.Abs(filtered)));
    }
}
