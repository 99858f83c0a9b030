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

/// <summary>
/// Where a run's four channels sit in a delimited file: the header (delimiter, columns, its line), each channel's
/// column index, name and factor to SI. Building it checks that every mapped column exists.
/// </summary>
/// <param name="Header">The file's header.</param>
/// <param name="Index">Column index of time, piezo, bias and signal.</param>
/// <param name="ToSi">Factor to SI of each of the four.</param>
/// <param name="Names">Column name of each of the four.</param>
public sealed record CsvLayout(ForceFit.Ingest.Data.DataFileHeader Header, int[] Index, double[] ToSi, string[] Names)
{
    /// <summary>The delimiter as a byte.</summary>
    public byte Separator => (byte)Header.Delimiter;

    /// <summary>Fields per row.</summary>
    public int FieldCount => Header.Columns.Count;

    /// <summary>Reads the header of the run's data file and maps the channels; problems name the file and column.</summary>
    public static CsvLayout For(ForceFit.Ingest.RunFiles.RunSettings run)
    {
        var header = ForceFit.Ingest.Data.DataFileProbe.ReadHeader(run.DataFile);
        var missing = ForceFit.Ingest.Data.DataFileProbe.CheckColumns(run);
        if (missing.Count > 0) throw new ForceFit.Core.Problems.InputException(missing);
        var columns = MappedChannels.Of(run);
        var names = header.Columns.ToList();
        return new CsvLayout(header, columns.Select(c => names.IndexOf(c.Name)).ToArray(),
            columns.Select(c => c.Unit.ToSi).ToArray(), columns.Select(c => c.Name).ToArray());
    }
}
