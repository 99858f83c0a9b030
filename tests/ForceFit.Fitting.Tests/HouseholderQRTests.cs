namespace ForceFit.Fitting.Tests;

/// <summary>
/// The Householder QR that the Levenberg–Marquardt steps and covariances use, on NIST StRD data: the least-squares
/// solution of Longley (six predictors, ill-conditioned) and Filip (tenth-degree polynomial, NIST's hardest) must
/// reach the certified estimates to 7 and 6 agreeing digits (common practice; the criterion of NistLinearTests).
/// </summary>
public sealed class HouseholderQRTests
{
    [Test]
    public void Longley_solved_by_the_QR_reaches_the_certified_estimates()
    {
        NistDataset d = NistStrd.Read("Longley");
        var columns = new double[7][];
        columns[0] = d.Y.Select(_ => 1.0).ToArray();
        for (int j = 0; j < 6; j++) columns[j + 1] = d.X.Select(r => r[j]).ToArray();
        double[] b = new HouseholderQR(columns).Solve(d.Y);
        for (int j = 0; j < 7; j++) Assert.That(NistStrd.Lre(b[j], d.Certified[j]), Is.GreaterThanOrEqualTo(7), $"B{j}");
    }

    [Test]
    public void Filip_solved_by_the_QR_reaches_the_certified_estimates()
    {
        NistDataset d = NistStrd.Read("Filip");
        // Columns scaled to unit norm first (the solution is scaled back), as any careful polynomial fit would.
        var columns = Enumerable.Range(0, 11).Select(p => d.X.Select(r => Math.Pow(r[0], p)).ToArray()).ToArray();
        double[] norms = columns.Select(c => Math.Sqrt(c.Sum(v => v * v))).ToArray();
        for (int p = 0; p < 11; p++) columns[p] = columns[p].Select(v => v / norms[p]).ToArray();
        double[] b = new HouseholderQR(columns).Solve(d.Y);
        for (int p = 0; p < 11; p++) Assert.That(NistStrd.Lre(b[p] / norms[p], d.Certified[p]), Is.GreaterThanOrEqualTo(6), $"B{p}");
    }

    [Test]
    public void R_is_upper_triangular_and_reproduces_the_columns_norms()
    {
        // |A e_j| = |R e_j| for every column (Q has orthonormal columns): an identity, checked on a fixed matrix.
        var random = new Random(7);
        var columns = Enumerable.Range(0, 5).Select(_ => Enumerable.Range(0, 9).Select(_ => random.NextDouble() - 0.5).ToArray()).ToArray();
        double[,] r = new HouseholderQR(columns).R;
        for (int j = 0; j < 5; j++)
        {
            for (int i = j + 1; i < 5; i++) Assert.That(r[i, j], Is.Zero);
            double normA = Math.Sqrt(columns[j].Sum(v => v * v)), normR = Math.Sqrt(Enumerable.Range(0, 5).Sum(i => r[i, j] * r[i, j]));
            Assert.That(normR, Is.EqualTo(normA).Within(1e-14));
        }
    }
}
