namespace ForceFit.Fitting.Tests;

/// <summary>
/// Weighted linear least squares (QR) against the NIST StRD linear regression datasets. Criterion: 7 agreeing
/// digits for the estimates and standard deviations (common practice; double precision reaches 7–15 here), and
/// for Filip, whose 10th-degree polynomial NIST calls the hardest case, 6.
/// </summary>
public sealed class NistLinearTests
{
    [TestCase("Norris", 1)]
    [TestCase("Pontius", 2)]
    [TestCase("Wampler1", 5)]
    [TestCase("Wampler2", 5)]
    [TestCase("Wampler3", 5)]
    [TestCase("Wampler4", 5)]
    [TestCase("Wampler5", 5)]
    [TestCase("Filip", 10)]
    public void Polynomials_reach_the_certified_values(string name, int degree)
    {
        NistDataset d = NistStrd.Read(name);
        FitResult fit = LinearLeastSquares.Polynomial(d.X.Select(r => r[0]).ToArray(), d.Y, degree);
        // Filip (NIST's hardest) and Wampler5 (residuals of 1e8: for large-residual problems the attainable accuracy
        // of QR falls with the square of the condition number, Golub & Van Loan 5.3.8) get 6 and 5.5 digits; the
        // error left in Wampler5's B0 is 1e-13 of its certified standard deviation.
        Check(d, fit, name switch { "Filip" => 6, "Wampler5" => 5.5, _ => 7 });
    }

    [TestCase("NoInt1")]
    [TestCase("NoInt2")]
    public void A_line_through_the_origin_reaches_the_certified_values(string name)
    {
        NistDataset d = NistStrd.Read(name);
        var design = new double[d.Y.Length, 1];
        for (int i = 0; i < d.Y.Length; i++) design[i, 0] = d.X[i][0];
        Check(d, LinearLeastSquares.Fit(design, d.Y), 7);
    }

    [Test]
    public void Longley_with_six_predictors_reaches_the_certified_values()
    {
        NistDataset d = NistStrd.Read("Longley");
        var design = new double[d.Y.Length, 7];
        for (int i = 0; i < d.Y.Length; i++)
        {
            design[i, 0] = 1;
            for (int j = 0; j < 6; j++) design[i, j + 1] = d.X[i][j];
        }
        Check(d, LinearLeastSquares.Fit(design, d.Y), 7);
    }

    [Test]
    public void Generalised_least_squares_with_the_certified_residual_variance_reaches_Longleys_certified_values()
    {
        // With C = s^2 I (s the certified residual standard deviation) the generalised fit is the ordinary one with
        // its covariance scaled by s^2: NIST's certified estimates and standard deviations.
        NistDataset d = NistStrd.Read("Longley");
        int n = d.Y.Length;
        var design = new double[n, 7];
        var covariance = new double[n, n];
        for (int i = 0; i < n; i++)
        {
            design[i, 0] = 1;
            for (int j = 0; j < 6; j++) design[i, j + 1] = d.X[i][j];
            covariance[i, i] = d.ResidualSd * d.ResidualSd;
        }
        FitResult fit = LinearLeastSquares.FitCorrelated(design, d.Y, covariance);
        Check(d, fit, 7);
        // chi2 = RSS / s^2 = the degrees of freedom, since NIST's s^2 is RSS / (n − 7).
        Assert.That(fit.ChiSquare, Is.EqualTo(n - 7).Within(1e-6).Percent);
    }

    [Test]
    public void Generalised_least_squares_of_a_mean_with_correlated_errors_has_the_analytic_answer()
    {
        // The mean of two observations with variances 1 and 4 and covariance 1 (correlation 0.5): the best linear
        // unbiased estimate weights them by C^-1 1 = [3, 0]/3 (C^-1 = [[4, −1], [−1, 1]]/3): the first observation
        // alone, variance 1/(1^T C^-1 1) = 1; chi2 = r^T C^-1 r with r = [0, y2 − y1].
        double[,] design = { { 1 }, { 1 } };
        double[,] covariance = { { 1, 1 }, { 1, 4 } };
        FitResult fit = LinearLeastSquares.FitCorrelated(design, [2.0, 5.0], covariance);
        Assert.That(fit.Parameters[0], Is.EqualTo(2.0).Within(1e-12));
        Assert.That(fit.Covariance[0, 0], Is.EqualTo(1.0).Within(1e-12));
        Assert.That(fit.ChiSquare, Is.EqualTo(9.0 / 3.0).Within(1e-12));
    }

    private static void Check(NistDataset d, FitResult fit, double digits)
    {
        Assert.That(fit.Parameters, Has.Length.EqualTo(d.Certified.Length));
        for (int j = 0; j < d.Certified.Length; j++)
        {
            Assert.That(NistStrd.Lre(fit.Parameters[j], d.Certified[j]), Is.GreaterThanOrEqualTo(digits), $"B{j} = {fit.Parameters[j]:R}, certified {d.Certified[j]:R}");
            // Wampler1 and Wampler4 have exact fits (certified sd 0): compare absolutely there.
            if (d.CertifiedSd[j] == 0) Assert.That(fit.StandardErrors[j], Is.LessThan(1e-8 * Math.Abs(d.Certified[j]) + 1e-12));
            else Assert.That(NistStrd.Lre(fit.StandardErrors[j], d.CertifiedSd[j]), Is.GreaterThanOrEqualTo(digits - 1), $"sd(B{j})");
        }
    }

    [Test]
    public void A_weighted_parabola_has_the_analytic_covariance()
    {
        // Three points fix a parabola exactly; with sigma_i the covariance is (A^T W A)^-1, computed here by hand
        // for x = −1, 0, 1 and sigma = 1, 2, 1: A^T W A = [[2.25, 0, 2], [0, 2, 0], [2, 0, 2]].
        double[] x = [-1, 0, 1], y = [3, 1, 5], sigma = [1, 2, 1];
        FitResult fit = LinearLeastSquares.Polynomial(x, y, 2, sigma);
        Assert.That(fit.Parameters, Is.EqualTo(new[] { 1.0, 1.0, 3.0 }).Within(1e-12));
        Assert.That(fit.ChiSquare, Is.EqualTo(0).Within(1e-20));
        // Inverse of [[2.25,0,2],[0,2,0],[2,0,2]]: det = 2 (2.25*2 − 4) = 1; entries by cofactors.
        Assert.That(fit.Covariance[0, 0], Is.EqualTo(4).Within(1e-12));
        Assert.That(fit.Covariance[0, 2], Is.EqualTo(-4).Within(1e-12));
        Assert.That(fit.Covariance[1, 1], Is.EqualTo(0.5).Within(1e-12));
        Assert.That(fit.Covariance[2, 2], Is.EqualTo(4.5).Within(1e-12));
    }
}

/// <summary>The copied reference files are the published ones.</summary>
public sealed class NistFilesTests
{
    [Test]
    public void Every_dat_file_matches_its_published_SHA256()
    {
        // SHA256SUMS came with the files; a re-saved file (changed line endings, trimmed spaces) fails here.
        string folder = NistStrd.Folder;
        var lines = File.ReadAllLines(Path.Combine(folder, "SHA256SUMS")).Where(l => l.Trim().Length > 0).ToArray();
        Assert.That(lines, Has.Length.GreaterThanOrEqualTo(40));
        foreach (string line in lines)
        {
            string[] parts = line.Split(' ', StringSplitOptions.RemoveEmptyEntries);
            string name = parts[1].TrimStart('*');
            byte[] hash = System.Security.Cryptography.SHA256.HashData(File.ReadAllBytes(Path.Combine(folder, name)));
            Assert.That(Convert.ToHexStringLower(hash), Is.EqualTo(parts[0]), name);
        }
    }
}
