namespace ForceFit.Core.Numerics;

/// <summary>The inner loops the fits and the noise model share, the machine's vector width at a time.</summary>
public static class VectorKernels
{
    /// <summary>Sum of x[i] y[i].</summary>
    [System.Runtime.CompilerServices.MethodImpl(System.Runtime.CompilerServices.MethodImplOptions.AggressiveOptimization)]
    public static double Dot(ReadOnlySpan<double> x, ReadOnlySpan<double> y)
    {
        int n = x.Length, width = System.Numerics.Vector<double>.Count, i = 0;
        var acc = System.Numerics.Vector<double>.Zero;
        for (; i + width <= n; i += width)
            acc += new System.Numerics.Vector<double>(x[i..]) * new System.Numerics.Vector<double>(y[i..]);
        double s = System.Numerics.Vector.Sum(acc);
        for (; i < n; i++) s += x[i] * y[i];
        return s;
    }

    /// <summary>y ← y − a x.</summary>
    public static void SubtractScaled(Span<double> y, double a, ReadOnlySpan<double> x)
    {
        int n = y.Length, width = System.Numerics.Vector<double>.Count, i = 0;
        var va = new System.Numerics.Vector<double>(a);
        for (; i + width <= n; i += width)
            (new System.Numerics.Vector<double>(y[i..]) - va * new System.Numerics.Vector<double>(x[i..])).CopyTo(y[i..]);
        for (; i < n; i++) y[i] -= a * x[i];
    }
}
