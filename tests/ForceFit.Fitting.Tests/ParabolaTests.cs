namespace ForceFit.Fitting.Tests;

/// <summary>The bias parabola: exact recovery of noise-free data and unit-rms pulls on noisy data with known truth.</summary>
public sealed class ParabolaTests
{
    [Test]
    public void Noise_free_data_give_the_injected_parabola()
    {
        double[] v = [-0.2, -0.1, 0.0, 0.1, 0.2, 0.3];
        double c = 0.042, v0 = 0.021, y0 = -1.5e-3;
        double[] y = v.Select(x => c * (x - v0) * (x - v0) + y0).ToArray();
        ParabolaFit p = ParabolaFit.Fit(v, y, v.Select(_ => 1e-6).ToArray());
        Assert.That(p.Curvature, Is.EqualTo(c).Within(1e-12).Percent);
        Assert.That(p.ResidualPotential, Is.EqualTo(v0).Within(1e-13));
        Assert.That(p.Vertex, Is.EqualTo(y0).Within(1e-15));
        Assert.That(p.DegreesOfFreedom, Is.EqualTo(3));
    }

    [Test]
    public void Pulls_of_V0_curvature_and_vertex_have_unit_rms_and_chi_square_is_chi_square_distributed()
    {
        // 4000 simulated parabolas with Gaussian noise of known sigma (truth injected); the pulls' rms must be 1 within
        // its sampling error (about 1/sqrt(2N) = 0.011) and the mean chi2/dof 1 within sqrt(2/(N dof)).
        var random = new Random(31);
        double Normal() => Math.Sqrt(-2 * Math.Log(1 - random.NextDouble())) * Math.Cos(2 * Math.PI * random.NextDouble());
        double[] v = [-0.12, -0.08, -0.04, 0.0, 0.04, 0.08, 0.12];
        double c = 0.42, v0 = 0.019, y0 = -2e-3, sigma = 1e-4;
        var pulls = new List<double[]>();
        double chi2 = 0;
        const int n = 4000;
        for (int k = 0; k < n; k++)
        {
            double[] y = v.Select(x => c * (x - v0) * (x - v0) + y0 + sigma * Normal()).ToArray();
            ParabolaFit p = ParabolaFit.Fit(v, y, v.Select(_ => sigma).ToArray());
            pulls.Add([(p.Curvature - c) / p.CurvatureSigma, (p.ResidualPotential - v0) / p.ResidualPotentialSigma, (p.Vertex - y0) / p.VertexSigma]);
            chi2 += p.ChiSquare / p.DegreesOfFreedom;
        }
        for (int q = 0; q < 3; q++)
        {
            double rms = Math.Sqrt(pulls.Average(x => x[q] * x[q]));
            Assert.That(rms, Is.EqualTo(1).Within(0.04), $"parameter {q}");
        }
        Assert.That(chi2 / n, Is.EqualTo(1).Within(4 * Math.Sqrt(2.0 / (n * 4))));
    }

    [Test]
    public void Two_biases_are_refused()
    {
        Assert.Throws<ArgumentException>(() => ParabolaFit.Fit([0.1, 0.2, 0.1], [1, 2, 1], [1, 1, 1]));
    }
}
