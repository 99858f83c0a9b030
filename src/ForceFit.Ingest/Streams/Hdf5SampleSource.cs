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
    private ulong _position;
    private double _lastTime = double.NegativeInfinity;

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
    }

    /// <inheritdoc />
    public long BytesRead => Length == 0 || _length == 0 ? 0 : (long)(Length * ((double)_position / _length));

    /// <inheritdoc />
    public long Length { get; }

    /// <inheritdoc />
    public IReadOnlyList<string> Warnings { get; } = [];

    /// <inheritdoc />
    public bool Read(SampleBlock block)
    {
        block.Count = 0;
        if (_position >= _length) return false;
        ulong count = Math.Min((ulong)Math.Min(block.Capacity, Chunk), _length - _position);
        var selection = new HyperslabSelection(_position, count);
        double[][] columns = new double[4][];
        for (int c = 0; c < 4; c++) columns[c] = _datasets[c].Read<double[]>(fileSelection: selection);
        for (int i = 0; i < (int)count; i++)
        {
            long index = (long)_position + i;
            for (int c = 0; c < 4; c++)
            {
                if (!double.IsFinite(columns[c][i]))
                    throw new InputException(new Problem(_file, null, $"dataset '{_names[c]}', index {index}: {columns[c][i]} is not a finite number"));
            }
            double t = columns[0][i] * _toSi[0];
            if (!(t > _lastTime))
                throw new InputException(new Problem(_file, null, $"dataset '{_names[0]}', index {index}: time does not increase"));
            _lastTime = t;
            block.Time[i] = t;
            block.Piezo[i] = columns[1][i] * _toSi[1];
            block.Bias[i] = columns[2][i] * _toSi[2];
            block.Signal[i] = columns[3][i] * _toSi[3];
            block.Lines[i] = index;
        }
        block.Count = (int)count;
        _position += count;
        return true;
    }

    /// <inheritdoc />
    public void Dispose() => _handle.Dispose();

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
