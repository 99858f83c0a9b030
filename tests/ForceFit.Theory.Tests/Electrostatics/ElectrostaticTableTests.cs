using ForceFit.Theory.Electrostatics;

namespace ForceFit.Theory.Tests.Electrostatics;

/// <summary>
/// The tabulated electrostatics against the exact series (<see cref="SpherePlateElectrostatics"/>, itself checked
/// against the published limits in SpherePlateElectrostaticsTests), at a tabulated radius and at a radius 0.2% away,
/// which is read from the first table through the scale invariance C = eps0 R g(a/R).
/// </summary>
public sealed class ElectrostaticTableTests
{
    [TestCase(151e-6)]
    [TestCase(151.3e-6)]
    [TestCase(151e-6 * 0.96)]
    public void Tables_agree_with_the_series_to_1e_9(double radius)
    {
        ElectrostaticTable.For(151e-6); // the tabulated radius the others may scale from
        ElectrostaticTable table = ElectrostaticTable.For(radius);
        foreach (double a in new[] { 5e-9, 80e-9, 1e-6, 10e-6, 50e-6 })
        {
            var exact = SpherePlateElectrostatics.At(a, radius);
            Assert.That(table.Force(a), Is.EqualTo(exact.Force).Within(1e-9 * Math.Abs(exact.Force)), $"force at {a}");
            Assert.That(table.Gradient(a), Is.EqualTo(exact.Gradient).Within(1e-9 * Math.Abs(exact.Gradient)), $"gradient at {a}");
        }
    }
}
