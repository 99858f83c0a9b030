namespace ForceFit.Ingest.Streams;

/// <summary>
/// A block of samples in SI, owned by its source and reused: valid until the source's next <see cref="ISampleSource.Next"/>.
/// </summary>
public sealed class SampleBlock
{
    /// <summary>Creates a block with room for <paramref name="capacity"/> samples.</summary>
    public SampleBlock(int capacity)
    {
        Time = new double[capacity];
        Piezo = new double[capacity];
        Bias = new double[capacity];
        Signal = new double[capacity];
        LineOffsets = new int[capacity];
    }

    /// <summary>Time (s).</summary>
    public double[] Time { get; private set; }
    /// <summary>Recorded piezo reading (m).</summary>
    public double[] Piezo { get; private set; }
    /// <summary>Recorded bias (V).</summary>
    public double[] Bias { get; private set; }
    /// <summary>Signal: frequency (Hz) or deflection (V, or a pure number).</summary>
    public double[] Signal { get; private set; }
    /// <summary>Each sample's line (CSV) or index (HDF5) relative to <see cref="LineBase"/>.</summary>
    public int[] LineOffsets { get; private set; }
    /// <summary>The 1-based line (CSV) or 0-based index (HDF5) that offsets count from.</summary>
    public long LineBase { get; set; }
    /// <summary>Samples in the block.</summary>
    public int Count { get; set; }
    /// <summary>Room in the block.</summary>
    public int Capacity => Time.Length;

    /// <summary>The 1-based line (CSV) or 0-based index (HDF5) of sample <paramref name="i"/>.</summary>
    public long LineOf(int i) => LineBase + LineOffsets[i];

    /// <summary>Doubles the room, keeping the samples.</summary>
    public void Grow()
    {
        int size = Math.Max(16, 2 * Capacity);
        double[] t = Time, p = Piezo, v = Bias, s = Signal;
        int[] l = LineOffsets;
        Array.Resize(ref t, size); Array.Resize(ref p, size); Array.Resize(ref v, size); Array.Resize(ref s, size); Array.Resize(ref l, size);
        (Time, Piezo, Bias, Signal, LineOffsets) = (t, p, v, s, l);
    }
}

/// <summary>A source of samples for one run: CSV/TSV or HDF5. Time is checked to increase across the whole run.</summary>
public interface ISampleSource : IDisposable
{
    /// <summary>The next block of samples, or null when there are no more; the block is reused by the next call.</summary>
    SampleBlock? Next();

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
