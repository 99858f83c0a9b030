namespace ForceFit.Ingest.Steps;

/// <summary>
/// A run's raw channels reduced for plotting without holding the samples: per time bin the minimum and maximum of
/// the piezo, bias and signal channels (SI), plus the first samples unreduced for a close-up of the first steps.
/// </summary>
/// <param name="Time">Start time of each bin (s).</param>
/// <param name="PiezoMin">Lowest piezo reading in the bin (m).</param>
/// <param name="PiezoMax">Highest piezo reading (m).</param>
/// <param name="BiasMin">Lowest bias (V).</param>
/// <param name="BiasMax">Highest bias (V).</param>
/// <param name="SignalMin">Lowest signal (Hz or V).</param>
/// <param name="SignalMax">Highest signal.</param>
/// <param name="FirstTime">The first samples' times (s).</param>
/// <param name="FirstPiezo">Their piezo readings (m).</param>
/// <param name="FirstBias">Their biases (V).</param>
/// <param name="FirstSignal">Their signals.</param>
public sealed record SignalEnvelope(double[] Time, double[] PiezoMin, double[] PiezoMax, double[] BiasMin, double[] BiasMax, double[] SignalMin, double[] SignalMax,
    double[] FirstTime, double[] FirstPiezo, double[] FirstBias, double[] FirstSignal);

/// <summary>
/// Builds a <see cref="SignalEnvelope"/> while the samples stream past: bins of a whole number of samples, starting at
/// one sample per bin; whenever the bins reach twice the target count, neighbours are merged and the samples per bin
/// double. Memory stays at a few thousand numbers whatever the length of the run.
/// </summary>
public sealed class EnvelopeBuilder(int targetBins = 1000, int firstSamples = 4000)
{
    private readonly List<double> _time = [];
    private readonly List<double>[] _min = [[], [], []];
    private readonly List<double>[] _max = [[], [], []];
    private readonly List<double>[] _first = [[], [], [], []];
    private long _perBin = 1;
    private long _inBin;

    /// <summary>Adds a block of samples (SI).</summary>
    [System.Runtime.CompilerServices.MethodImpl(System.Runtime.CompilerServices.MethodImplOptions.AggressiveOptimization)]
    public void Add(ForceFit.Ingest.Streams.SampleBlock block)
    {
        int n = block.Count;
        int head = Math.Min(firstSamples - _first[0].Count, n);
        if (head > 0)
        {
            _first[0].AddRange(block.Time.AsSpan(0, head));
            _first[1].AddRange(block.Piezo.AsSpan(0, head));
            _first[2].AddRange(block.Bias.AsSpan(0, head));
            _first[3].AddRange(block.Signal.AsSpan(0, head));
        }
        for (int i = 0; i < n;)
        {
            if (_inBin == 0)
            {
                if (_time.Count >= 2 * targetBins) Merge();
                _time.Add(block.Time[i]);
                for (int c = 0; c < 3; c++)
                {
                    _min[c].Add(double.PositiveInfinity);
                    _max[c].Add(double.NegativeInfinity);
                }
            }
            int take = (int)Math.Min(_perBin - _inBin, n - i);
            int last = _time.Count - 1;
            Update(0, last, block.Piezo.AsSpan(i, take));
            Update(1, last, block.Bias.AsSpan(i, take));
            Update(2, last, block.Signal.AsSpan(i, take));
            _inBin += take;
            if (_inBin >= _perBin) _inBin = 0;
            i += take;
        }
    }

    [System.Runtime.CompilerServices.MethodImpl(System.Runtime.CompilerServices.MethodImplOptions.AggressiveOptimization)]
    private void Update(int channel, int bin, ReadOnlySpan<double> values)
    {
        double lo = _min[channel][bin], hi = _max[channel][bin];
        foreach (double v in values)
        {
            if (v < lo) lo = v;
            if (v > hi) hi = v;
        }
        _min[channel][bin] = lo;
        _max[channel][bin] = hi;
    }

    private void Merge()
    {
        int pairs = _time.Count / 2;
        for (int i = 0; i < pairs; i++)
        {
            _time[i] = _time[2 * i];
            for (int c = 0; c < 3; c++)
            {
                _min[c][i] = Math.Min(_min[c][2 * i], _min[c][2 * i + 1]);
                _max[c][i] = Math.Max(_max[c][2 * i], _max[c][2 * i + 1]);
            }
        }
        _time.RemoveRange(pairs, _time.Count - pairs);
        for (int c = 0; c < 3; c++)
        {
            _min[c].RemoveRange(pairs, _min[c].Count - pairs);
            _max[c].RemoveRange(pairs, _max[c].Count - pairs);
        }
        _perBin *= 2;
    }

    /// <summary>The envelope so far.</summary>
    public SignalEnvelope Build() => new([.. _time], [.. _min[0]], [.. _max[0]], [.. _min[1]], [.. _max[1]], [.. _min[2]], [.. _max[2]],
        [.. _first[0]], [.. _first[1]], [.. _first[2]], [.. _first[3]]);
}
