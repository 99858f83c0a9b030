using ForceFit.Analysis.Reduction;

namespace ForceFit.Analysis.Tests.Reduction;

/// <summary>
/// The two-point rule of a lagged ramp window against the filters themselves, run on a quadratic M (for which the
/// rule is exact): the per-sample filter y_n = x_n + rho (y_(n−1) − x_n) of the simulator, and the continuous
/// first-order filter, whose steady-state response to a quadratic x(t) is y = x − tau x' + tau^2 x'' (solution of
/// tau y' + y = x, analytic).
/// </summary>
public sealed class LaggedWindowTests
{
    // A window of the simulator's ramp: 200 samples/s, 40 nm/s, tau = 30 ms, 20 samples, M quadratic in the reading.
    private const double Dt = 0.005, Speed = -40e-9, Tau = 0.03;
    private static double M(double r) => 3.0 + 2e8 * r + 7e16 * r * r;

    [Test]
    public void The_rule_with_the_geometric_delay_variance_matches_the_per_sample_filter_to_rounding()
    {
        double rho = Math.Exp(-Dt / Tau);
        double lag = Dt * rho / (1 - rho);
        // Filter from far back (rho^400 ~ 1e-29, the start forgotten), then average the window's last 20 samples.
        const int n = 420, window = 20;
        double Reading(int i) => 1e-6 + Speed * i * Dt;
        double y = M(Reading(0));
        double sum = 0, sumR = 0, sumR2 = 0;
        for (int i = 1; i < n; i++)
        {
            double x = M(Reading(i));
            y = x + (y - x) * rho;
            if (i < n - window) continue;
            sum += y;
            sumR += Reading(i);
            sumR2 += Reading(i) * Reading(i);
        }
        double mean = sum / window, r = sumR / window, spread = Math.Sqrt(Math.Max(0, sumR2 / window - r * r));
        var (low, high) = LaggedWindow.TwoPoints(r, spread, Speed, lag, Dt);
        double rule = 0.5 * (M(low) + M(high));
        Assert.That(rule, Is.EqualTo(mean).Within(1e-12 * Math.Abs(mean)));
        // The test of the test: the continuous filter's variance L^2 misses by 0.5 u^2 L dt M'' (here 1.2e-7 of M).
        var (low0, high0) = LaggedWindow.TwoPoints(r, spread, Speed, lag, 0);
        double continuous = 0.5 * (M(low0) + M(high0));
        Assert.That(Math.Abs(continuous - mean), Is.GreaterThan(1e-9 * Math.Abs(mean)));
        Assert.That(mean - continuous, Is.EqualTo(0.5 * Speed * Speed * lag * Dt * 2 * 7e16).Within(1e-3 * Math.Abs(mean - continuous)));
    }

    [Test]
    public void The_rule_with_step_zero_matches_the_continuous_filter()
    {
        // x(t) = M(r0 + u t) = c0 + c1 t + c2 t^2; steady state y = x − tau x' + tau^2 x'' (analytic); the window
        // is one instant (spread 0).
        double r0 = 1e-6, t = 0.7;
        double c1 = 2e8 * Speed + 2 * 7e16 * r0 * Speed, c2 = 7e16 * Speed * Speed;
        double x = M(r0 + Speed * t), dx = c1 + 2 * c2 * t, ddx = 2 * c2;
        double filtered = x - Tau * dx + Tau * Tau * ddx;
        var (low, high) = LaggedWindow.TwoPoints(r0 + Speed * t, 0, Speed, Tau, 0);
        Assert.That(0.5 * (M(low) + M(high)), Is.EqualTo(filtered).Within(1e-13 * Math.Abs(filtered)));
    }
}
