namespace ForceFit.Analysis.Reduction;

/// <summary>
/// The two-point rule for a window of a ramp whose recorded signal lags: the mean of a smooth M over readings with
/// mean r and spread s, recorded through a filter that delays the signal by a random D (mean L) while the reading
/// moves at speed u, is [M(r − u L − h) + M(r − u L + h)]/2 with h^2 = s^2 + u^2 Var(D), exact to second order in
/// the readings' and the delay's spreads (Taylor expansion of E[M(r + e − u D)] about r − u L).
/// </summary>
public static class LaggedWindow
{
    /// <summary>
    /// The two readings r − u L ∓ h. For a first-order filter run once per sample, y_n = x_n + rho (y_(n−1) − x_n),
    /// the delay is geometric, P(D = j dt) = (1 − rho) rho^j, with mean L = dt rho/(1 − rho) and variance
    /// dt^2 rho/(1 − rho)^2 = L (L + dt); a continuous filter (dt → 0) gives L^2.
    /// </summary>
    /// <param name="reading">Mean reading r of the window (m).</param>
    /// <param name="spread">Rms spread s of the true readings about it (m).</param>
    /// <param name="speed">Sweep speed u (m/s, signed).</param>
    /// <param name="lag">Mean delay L (s).</param>
    /// <param name="step">The filter's time step dt (s): the sample interval for a per-sample filter, 0 for a continuous one.</param>
    public static (double Low, double High) TwoPoints(double reading, double spread, double speed, double lag, double step)
    {
        double shift = lag * speed;
        double half = Math.Sqrt(spread * spread + Math.Max(0, lag * (lag + step)) * speed * speed);
        return (reading - shift - half, reading - shift + half);
    }
}
