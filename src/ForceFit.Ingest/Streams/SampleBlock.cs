namespace ForceFit.Ingest.Streams;

/// <summary>A block of samples in SI, reused from block to block (no allocation per sample).</summary>
public sealed class SampleBlock
{
    /// <summary>Creates a block with room for <paramref name="capacity"/> samples.</summary>
    public SampleBlock(int capacity)
    {
        Time = new double[capacity];
        Piezo = new double[capacity];
        Bias = new double[capacity];
        Signal = new double[capacity];
        Lines = new long[capacity];
    }

    /// <summary>Time (s).</summary>
    public double[] Time { get; }
    /// <summary>Recorded piezo reading (m).</summary>
    public double[] Piezo { get; }
    /// <summary>Recorded bias (V).</summary>
    public double[] Bias { get; }
    /// <summary>Signal: frequency (Hz) or deflection (V, or a pure number).</summary>
    public double[] Signal { get; }
    /// <summary>The 1-based line of each sample (CSV) or its 0-based index (HDF5).</summary>
    public long[] Lines { get; }
    /// <summary>Samples in the block.</summary>
    public int Count { get; set; }
    /// <summary>Room in the block.</summary>
    public int Capacity => Time.Length;
}

/// <summary>A source of samples for one run: CSV/TSV or HDF5.</summary>
public interface ISampleSource : IDisposable
{
    /// <summary>Fills the block; returns false when there are no more samples.</summary>
    bool Read(SampleBlock block);

    /// <summary>Bytes of the input consumed so far (for progress).</summary>
    long BytesRead { get; }

    /// <summary>Total bytes of the input.</summary>
    long Length { get; }

    /// <summary>Warnings met so far (a truncated last line, ...).</summary>
    IReadOnlyList<string> Warnings { get; }
}

/// <summary>The four channels a sample source reads, in order: time, piezo, bias and the mode's signal.</summary>
public static class MappedChannels
{
    /// <summary>The run's column settings for time, piezo, bias and signal (frequency or deflection by mode).</summary>
    public static ForceFit.Ingest.RunFiles.ColumnSettings[] Of(ForceFit.Ingest.RunFiles.RunSettings run)
    {
        var signal = run.Instrument.Mode == ForceFit.Ingest.RunFiles.InstrumentMode.Deflection ? run.Columns.Deflection! : run.Columns.Frequency!;
        return [run.Columns.Time, run.Columns.Piezo, run.Columns.Bias, signal];
    }
}
