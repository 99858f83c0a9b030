namespace ForceFit.Simulation;

/// <summary>
/// A seeded generator whose output is fixed by this code alone (not by the runtime's Random): xoshiro256**
/// (D. Blackman, S. Vigna, ACM Trans. Math. Softw. 47, 36 (2021)) seeded by SplitMix64, with normal deviates
/// by the Marsaglia polar method. The same seed gives the same numbers on every machine and .NET version.
/// </summary>
public sealed class RandomSource
{
    private ulong _s0, _s1, _s2, _s3;
    private double _spare;
    private bool _hasSpare;

    /// <summary>Seeds the generator.</summary>
    public RandomSource(ulong seed)
    {
        ulong x = seed;
        _s0 = SplitMix(ref x);
        _s1 = SplitMix(ref x);
        _s2 = SplitMix(ref x);
        _s3 = SplitMix(ref x);
    }

    /// <summary>An independent stream for a named part (run number, noise channel), derived from this seed.</summary>
    public RandomSource Fork(ulong stream) => new(NextUInt64() ^ (stream * 0x9E3779B97F4A7C15UL));

    private static ulong SplitMix(ref ulong x)
    {
        ulong z = x += 0x9E3779B97F4A7C15UL;
        z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9UL;
        z = (z ^ (z >> 27)) * 0x94D049BB133111EBUL;
        return z ^ (z >> 31);
    }

    /// <summary>64 random bits.</summary>
    public ulong NextUInt64()
    {
        ulong result = RotateLeft(_s1 * 5, 7) * 9;
        ulong t = _s1 << 17;
        _s2 ^= _s0;
        _s3 ^= _s1;
        _s1 ^= _s2;
        _s0 ^= _s3;
        _s2 ^= t;
        _s3 = RotateLeft(_s3, 45);
        return result;
    }

    private static ulong RotateLeft(ulong x, int k) => (x << k) | (x >> (64 - k));

    /// <summary>Uniform in [0, 1) with 53 random bits.</summary>
    public double NextDouble() => (NextUInt64() >> 11) * (1.0 / (1UL << 53));

    /// <summary>A standard normal deviate.</summary>
    public double NextGaussian()
    {
        if (_hasSpare)
        {
            _hasSpare = false;
            return _spare;
        }
        double u, v, s;
        do
        {
            u = 2 * NextDouble() - 1;
            v = 2 * NextDouble() - 1;
            s = u * u + v * v;
        } while (s >= 1 || s == 0);
        double factor = Math.Sqrt(-2 * Math.Log(s) / s);
        _spare = v * factor;
        _hasSpare = true;
        return u * factor;
    }
}

/// <summary>
/// Stationary AR(1) noise x_t = rho x_{t−1} + sqrt(1 − rho^2) sigma e_t: variance sigma^2 and lag-1 correlation rho,
/// the usual model of a tracking loop's output noise.
/// </summary>
public sealed class Ar1Noise
{
    private readonly RandomSource _random;
    private readonly double _rho;
    private readonly double _innovation;
    private double _state;

    /// <summary>Starts in the stationary distribution.</summary>
    public Ar1Noise(RandomSource random, double sigma, double rho)
    {
        if (!(rho > -1 && rho < 1)) throw new ArgumentOutOfRangeException(nameof(rho), "|rho| must be below 1");
        _random = random;
        _rho = rho;
        _innovation = sigma * Math.Sqrt(1 - rho * rho);
        _state = sigma * random.NextGaussian();
    }

    /// <summary>The next value.</summary>
    public double Next()
    {
        _state = _rho * _state + _innovation * _random.NextGaussian();
        return _state;
    }
}
