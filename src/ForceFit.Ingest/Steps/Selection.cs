namespace ForceFit.Ingest.Steps;

/// <summary>Order statistics without sorting.</summary>
public static class Selection
{
    /// <summary>
    /// The k-th smallest value (0-based) of the span, which is reordered: Hoare's FIND (quickselect, C. A. R. Hoare,
    /// Commun. ACM 4, 321 (1961)) with the median of three as pivot; expected linear time, the same value a full
    /// sort would put at k.
    /// </summary>
    [System.Runtime.CompilerServices.MethodImpl(System.Runtime.CompilerServices.MethodImplOptions.AggressiveOptimization)]
    public static double Nth(Span<double> x, int k)
    {
        if ((uint)k >= (uint)x.Length) throw new ArgumentOutOfRangeException(nameof(k));
        int lo = 0, hi = x.Length - 1;
        while (hi > lo)
        {
            int mid = lo + (hi - lo) / 2;
            // Median of three to x[mid].
            if (x[mid] < x[lo]) (x[mid], x[lo]) = (x[lo], x[mid]);
            if (x[hi] < x[lo]) (x[hi], x[lo]) = (x[lo], x[hi]);
            if (x[hi] < x[mid]) (x[hi], x[mid]) = (x[mid], x[hi]);
            double pivot = x[mid];
            int i = lo, j = hi;
            while (i <= j)
            {
                while (x[i] < pivot) i++;
                while (x[j] > pivot) j--;
                if (i <= j)
                {
                    (x[i], x[j]) = (x[j], x[i]);
                    i++;
                    j--;
                }
            }
            if (k <= j) hi = j;
            else if (k >= i) lo = i;
            else return x[k];
        }
        return x[k];
    }
}
