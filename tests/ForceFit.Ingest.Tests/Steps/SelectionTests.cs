using ForceFit.Ingest.Steps;

namespace ForceFit.Ingest.Tests.Steps;

/// <summary>Quickselect against the definition of the k-th order statistic: the value a full sort puts at k.</summary>
public sealed class SelectionTests
{
    [Test]
    public void The_kth_value_equals_the_sorted_kth_value_for_random_arrays_with_ties()
    {
        var random = new Random(7);
        for (int trial = 0; trial < 2000; trial++)
        {
            int n = random.Next(1, 300);
            // Few distinct values in some trials: ties are where partition schemes go wrong.
            int distinct = random.Next(2) == 0 ? 3 : 1000;
            double[] x = Enumerable.Range(0, n).Select(_ => (double)random.Next(distinct) - random.NextDouble() * (distinct > 3 ? 1 : 0)).ToArray();
            double[] sorted = x.OrderBy(v => v).ToArray();
            int k = random.Next(n);
            Assert.That(Selection.Nth(x.ToArray(), k), Is.EqualTo(sorted[k]), $"trial {trial}, n {n}, k {k}");
        }
    }
}
