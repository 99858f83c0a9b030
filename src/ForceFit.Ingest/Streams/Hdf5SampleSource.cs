using ForceFit.Core.Problems;
using ForceFit.Ingest.Data;
using ForceFit.Ingest.RunFiles;
using PureHDF;
using PureHDF.Selections;
using PureHDF.VOL.Native;

namespace ForceFit.Ingest.Streams;

/// <summary>
/// Streams a run's HDF5 file: four 1-D datasets (addressed by path) of equal length, read in chunks. A dataset's
/// optional "unit" attribute must agree with the run file's unit for that channel.
/// </summary>
public sealed class Hdf5SampleSource : ISampleSource
{
    private const int Chunk = 1 << 18;
    private readonly string _file;
    private readonly NativeFileHandle _handle;
    private readonly IH5Dataset[] _datasets = new IH5Dataset[4];
    private readonly double[] _toSi = new double[4];
    private readonly string[] _names = new string[4];
    private readonly ulong _length;
    private readonly SampleBlock[] _blocks = [new(Chunk), new(Chunk)];
    private Task<SampleBlock?>? _pending;
    private bool _finished;
    private ulong _delivered;

    /// <summary>Opens the file read-only and checks the datasets.</summary>
    public Hdf5SampleSource(RunSettings run)
    {
        _file = run.DataFile;
        IReadOnlyList<Problem> missing = DataFileProbe.CheckColumns(run);
        if (missing.Count > 0) throw new InputException(missing);
        ColumnSettings[] columns = MappedChannels.Of(run);
        _handle = new NativeFileHandle(H5File.OpenRead(_file));
        Length = new FileInfo(_file).Length;
        for (int c = 0; c < 4; c++)
        {
            string path = columns[c].Name.TrimStart('/');
            IH5Dataset dataset = _handle.File.Dataset(path);
            ulong[] dims = dataset.Space.Dimensions;
            if (dims.Length != 1)
                throw new InputException(new Problem(_file, null, $"dataset '{path}' has {dims.Length} dimensions; a channel is a 1-D dataset"));
            if (dataset.AttributeExists("unit"))
            {
                string unit = dataset.Attribute("unit").Read<string>();
                string declared = columns[c].Unit.Symbol.Length == 0 ? "1" : columns[c].Unit.Symbol;
                if (!string.Equals(unit.Trim(), declared, StringComparison.Ordinal) && !(unit.Trim().Length == 0 && declared == "1"))
                    throw new InputException(new Problem(_file, null, $"dataset '{path}' says unit '{unit}', but {run.RunFile} maps it with unit '{declared}'"));
            }
            _datasets[c] = dataset;
            _toSi[c] = columns[c].Unit.ToSi;
            _names[c] = path;
        }
        _length = _datasets[0].Space.Dimensions[0];
        for (int c = 1; c < 4; c++)
        {
            ulong n = _datasets[c].Space.Dimensions[0];
            if (n != _length)
                throw new InputException(new Problem(_file, null, $"dataset '{_names[c]}' has {n} values, '{_names[0]}' has {_length}: the channels must have the same length"));
        }
        if (_length == 0) throw new InputException(new Problem(_file, null, "the datasets are empty"));
        // A sample's "line" is its index: the block's first index plus its position in the block.
        foreach (SampleBlock block in _blocks)
            for (int i = 0; i < block.Capacity; i++) block.LineOffsets[i] = i;
    }

    /// <inheritdoc />
    public long BytesRead => Length == 0 || _length == 0 ? 0 : (long)(Length * ((double)_delivered / _length));

    /// <inheritdoc />
    public long Length { get; }

    /// <inheritdoc />
    public IReadOnlyList<string> Warnings { get; } = [];

    /// <inheritdoc />
    public SampleBlock? Next()
    {
        // Two blocks: the next one is read on a worker while the caller works on the one returned.
        if (_finished) return null;
        Task<SampleBlock?> pending = _pending ?? Task.Run(() => ReadBlock(_blocks[0], 0));
        _pending = null;
        SampleBlock? block = pending.GetAwaiter().GetResult();
        if (block is null)
        {
            _finished = true;
            return null;
        }
        _delivered = (ulong)block.LineBase + (ulong)block.Count;
        SampleBlock spare = ReferenceEquals(block, _blocks[0]) ? _blocks[1] : _blocks[0];
        ulong from = _delivered;
        _pending = Task.Run(() => ReadBlock(spare, from));
        return block;
    }

    [System.Runtime.CompilerServices.MethodImpl(System.Runtime.CompilerServices.MethodImplOptions.AggressiveOptimization)]
    private SampleBlock? ReadBlock(SampleBlock block, ulong position)
    {
        if (position >= _length) return null;
        int count = (int)Math.Min((ulong)Chunk, _length - position);
        var file = new HyperslabSelection(position, (ulong)count);
        var memory = new HyperslabSelection(0, (ulong)count);
        double[][] columns = [block.Time, block.Piezo, block.Bias, block.Signal];
        for (int c = 0; c < 4; c++)
        {
            _datasets[c].Read(columns[c], fileSelection: file, memorySelection: memory, memoryDims: [(ulong)block.Capacity]);
            double[] x = columns[c];
            double toSi = _toSi[c];
            for (int i = 0; i < count; i++)
            {
                if (!double.IsFinite(x[i]))
                    throw new InputException(new Problem(_file, null, $"dataset '{_names[c]}', index {(long)position + i}: {x[i]} is not a finite number"));
                x[i] *= toSi;
            }
        }
        double[] t = block.Time;
        // Time increases within the block and from the block before (its last time is known only to the caller's
        // order, so the block reads the value at position - 1 itself).
        double before = position == 0 ? double.NegativeInfinity : ReadTime(position - 1);
        for (int i = 0; i < count; i++)
        {
            if (!(t[i] > before))
                throw new InputException(new Problem(_file, null, $"dataset '{_names[0]}', index {(long)position + i}: time does not increase"));
            before = t[i];
        }
        block.LineBase = (long)position;
        block.Count = count;
        return block;
    }

    private double ReadTime(ulong index)
    {
        double[] one = _datasets[0].Read<double[]>(fileSelection: new HyperslabSelection(index, 1));
        return one[0] * _toSi[0];
    }

    /// <inheritdoc />
    public void Dispose()
    {
        try { _pending?.Wait(); } catch (AggregateException) { }
        _handle.Dispose();
    }

    // Keeps the opened file and disposes it.
    private sealed class NativeFileHandle(NativeFile file) : IDisposable
    {
        public NativeFile File { get; } = file;
        public void Dispose() => File.Dispose();
    }
}

/// <summary>Opens the right source for a run's data file.</summary>
public static class SampleSources
{
    /// <summary>
    /// HDF5 by the file's extension; CSV/TSV through the parallel chunked reader when the file holds plain
    /// numbers, or through the CsvHelper-based reader when its data have quoted fields.
    /// </summary>
    public static ISampleSource Open(RunSettings run)
    {
        if (DataFileProbe.KindOf(run.DataFile) == DataFileKind.Hdf5) return new Hdf5SampleSource(run);
        return ChunkedCsvSampleSource.Suits(run.DataFile) ? new ChunkedCsvSampleSource(run) : new CsvSampleSource(run);
    }
}
