using ForceFit.Theory.Lifshitz;

namespace ForceFit.Theory.Geometry;

/// <summary>Sphere–plate Casimir quantities at one separation.</summary>
/// <param name="Separation">a in m.</param>
/// <param name="Pressure">Plate–plate pressure in Pa (roughness-corrected).</param>
/// <param name="FreeEnergy">Plate–plate free energy per area in J/m^2 (roughness-corrected).</param>
/// <param name="Force">Sphere–plate force in N.</param>
/// <param name="ForceGradient">dF/da in N/m.</param>
/// <param name="ForceThirdDerivative">d³F/da³ in N/m³ (for the oscillation-amplitude correction).</param>
public sealed record SpherePlateResult(double Separation, double Pressure, double FreeEnergy, double Force, double ForceGradient, double ForceThirdDerivative);

/// <summary>Geometry settings for the sphere–plate conversion.</summary>
/// <param name="Radius">Sphere radius R in m.</param>
/// <param name="ThetaGradient">Beyond-PFA coefficient of the gradient: F' = −2 pi R P (1 + theta a/R).</param>
/// <param name="ThetaForce">Beyond-PFA coefficient of the force: F = 2 pi R E (1 + theta_F a/R).</param>
/// <param name="RoughnessVariance">delta_1^2 + delta_2^2 in m^2 (rms roughness of both surfaces).</param>
public sealed record SpherePlateGeometry(double Radius, double ThetaGradient = 0, double ThetaForce = 0, double RoughnessVariance = 0);

/// <summary>
/// Proximity force approximation with its first-order beyond-PFA correction and second-order roughness
/// (physics.md, Sphere–plate geometry): F = 2 pi R E (1 + theta_F a/R), F' = −2 pi R P (1 + theta a/R)
/// (G. Bimonte, T. Emig, R. L. Jaffe, M. Kardar, EPL 97, 50001 (2012)); roughness replaces f(a) by its average
/// over the height distribution to second order, f + (sigma^2/2) f'', which for f = a^−n is the factor
/// 1 + n(n+1) sigma^2 / (2 a^2).
/// </summary>
public static class SpherePlate
{
    /// <summary>Converts a plate–plate result at separation a to sphere–plate quantities.</summary>
    public static SpherePlateResult FromLifshitz(double a, LifshitzResult plates, SpherePlateGeometry g)
    {
        double half = g.RoughnessVariance / 2;
        // E'' = −P', so the rough energy is E − (sigma^2/2) P'; the rough pressure is P + (sigma^2/2) P''.
        double energy = plates.FreeEnergy - half * plates.PressureDerivative;
        double pressure = plates.Pressure + half * plates.PressureSecondDerivative;
        double twoPiR = 2 * Math.PI * g.Radius;
        double force = twoPiR * energy * (1 + g.ThetaForce * a / g.Radius);
        double gradient = -twoPiR * pressure * (1 + g.ThetaGradient * a / g.Radius);
        // F''' = d²/da² of the gradient: −2 pi R [P'' (1 + theta a/R) + 2 theta P' / R]; its roughness correction is
        // taken with the same relative size as the pressure's (a second-order correction of a small term).
        double roughFactor = plates.Pressure == 0 ? 1 : pressure / plates.Pressure;
        double third = -twoPiR * (plates.PressureSecondDerivative * (1 + g.ThetaGradient * a / g.Radius)
            + 2 * g.ThetaGradient * plates.PressureDerivative / g.Radius) * roughFactor;
        return new SpherePlateResult(a, pressure, energy, force, gradient, third);
    }

    /// <summary>
    /// Geometrical averaging (physics.md, surface roughness): every plate–plate quantity averaged over the local gap
    /// a − h, with h the combined height of the two surfaces toward each other and v its area fraction (fractions
    /// summing to 1): E = Sum v E(a − h), and likewise P and its derivatives. The error estimates average too.
    /// </summary>
    public static LifshitzResult GeometricAverage(Func<double, LifshitzResult> plates, double a, IReadOnlyList<(double Height, double Fraction)> distribution)
    {
        double e = 0, p = 0, p1 = 0, p2 = 0, err = 0, total = 0;
        int terms = 0, evaluations = 0;
        foreach ((double h, double v) in distribution)
        {
            if (a - h <= 0) throw new ArgumentException($"the height distribution reaches contact at a = {a:G4} m");
            LifshitzResult r = plates(a - h);
            e += v * r.FreeEnergy; p += v * r.Pressure; p1 += v * r.PressureDerivative; p2 += v * r.PressureSecondDerivative;
            err += v * r.PressureError;
            total += v;
            terms = Math.Max(terms, r.MatsubaraTerms);
            evaluations += r.Evaluations;
        }
        return new LifshitzResult(e / total, p / total, p1 / total, p2 / total, 0, err / total, 0, 0, terms, evaluations);
    }
}
