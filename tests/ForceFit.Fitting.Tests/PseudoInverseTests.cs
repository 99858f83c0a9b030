using ForceFit.Fitting;

namespace ForceFit.Fitting.Tests;

/// <summary>
/// Matrices.InverseOrPseudoInverse against the defining properties: for a positive definite matrix the inverse
/// (A A^-1 = I); for a singular covariance the Moore–Penrose pseudo-inverse (A A+ A = A, A+ A A+ = A+; Golub and
/// Van Loan, Matrix Computations, 5.5.4) with the rank of the matrix.
/// </summary>
public sealed class PseudoInverseTests
{
    [Test]
    public void A_positive_definite_matrix_gets_its_inverse_and_full_rank()
    {
        double[,] a = { { 4, 1, 0.5 }, { 1, 3, 0.2 }, { 0.5, 0.2, 2 } };
        (double[,] inverse, int rank) = Matrices.InverseOrPseudoInverse(a);
        double[,] identity = Matrices.Multiply(a, inverse);
        Assert.That(rank, Is.EqualTo(3));
        for (int i = 0; i < 3; i++) for (int j = 0; j < 3; j++) Assert.That(identity[i, j], Is.EqualTo(i == j ? 1 : 0).Within(1e-14));
    }

    [Test]
    public void A_singular_covariance_gets_the_moore_penrose_pseudo_inverse_and_its_rank()
    {
        // Two shared error rows over four points, the sum of their outer products: rank 2, and Cholesky fails.
        double[] u = [1, 2, 3, 4], v = [1, -1, 0.5, 2];
        var a = new double[4, 4];
        for (int i = 0; i < 4; i++) for (int j = 0; j < 4; j++) a[i, j] = u[i] * u[j] + v[i] * v[j];
        (double[,] pseudo, int rank) = Matrices.InverseOrPseudoInverse(a);
        Assert.That(rank, Is.EqualTo(2));
        double[,] back = Matrices.Multiply(Matrices.Multiply(a, pseudo), a), again = Matrices.Multiply(Matrices.Multiply(pseudo, a), pseudo);
        for (int i = 0; i < 4; i++)
            for (int j = 0; j < 4; j++)
            {
                Assert.That(back[i, j], Is.EqualTo(a[i, j]).Within(1e-12 * 30), "A A+ A = A");
                Assert.That(again[i, j], Is.EqualTo(pseudo[i, j]).Within(1e-12), "A+ A A+ = A+");
            }
        // With B = [u v], A = B B^T and B of full column rank, a residual r = B x has r^T A+ r = |x|^2 (B^T (B B^T)+ B = I):
        // r = 2 u is x = (2, 0), chi-square 4.
        double[] r = u.Select(x => 2 * x).ToArray();
        double chi = Matrices.Bilinear(r, pseudo, r);
        Assert.That(chi, Is.EqualTo(4).Within(1e-10));
    }
}
