using CsvHelper;
using ForceFit.Core.Problems;
using ForceFit.Ingest.Data;
using ForceFit.Ingest.RunFiles;

namespace ForceFit.Ingest.Streams;

/// <summary>
/// Streams a run's CSV/TSV into SI samples: the delimiter from the header line, '#' comment lines, quoted
/// headers, dot decimals whatever the locale. CsvHelper finds the records; the four mapped fields are parsed
/// straight from each record's bytes. Every bad value is an error naming the file, line and column; a truncated
/// last line is dropped with a warning.
/// </summary>
public sealed class CsvSampleSource : ISampleSource
{
    private readonly string _file;
    private readonly FileStream _stream;
    private readonly CsvReader _reader;
    private readonly int[] _index;
    private readonly double[] _toSi;
    private readonly string[] _names;
    private readonly byte _separator;
    private readonly int _fieldCount;
    private readonly bool _endsWithNewline;
    private readonly List<string> _warnings = [];
    private double _lastTime = double.NegativeInfinity;
    private long _lastTimeLine;
    private readonly SampleBlock _block = new(1 << 16);

    /// <summary>Opens the run's data file (read-only) and maps its columns.</summary>
    public CsvSampleSource(RunSettings run)
    {
        _file = run.DataFile;
        CsvLayout layout = CsvLayout.For(run);
        DataFileHeader header = layout.Header;
        _index = layout.Index;
        _toSi = layout.ToSi;
        _names = layout.Names;
        _fieldCount = layout.FieldCount;
        _separator = layout.Separator;
        _stream = new FileStream(_file, FileMode.Open, FileAccess.Read, FileShare.Read, 1 << 16);
        Length = _stream.Length;
        _endsWithNewline = EndsWithNewline(_stream);
        _reader = CsvReader.Create(_stream, new CsvReaderOptions
        {
            HasHeader = true,
            Separator = header.Delimiter,
            CommentPrefix = '#',
            TrackLineNumbers = true,
            SkipEmptyLines = true,
        }, leaveOpen: true);
        _ = _reader.Headers;
    }

    private static bool EndsWithNewline(FileStream stream)
    {
        if (stream.Length == 0) return true;
        stream.Seek(-1, SeekOrigin.End);
        bool newline = stream.ReadByte() == '\n';
        stream.Seek(0, SeekOrigin.Begin);
        return newline;
    }

    /// <inheritdoc />
    public long BytesRead => _stream.Position;

    /// <inheritdoc />
    public long Length { get; }

    /// <inheritdoc />
    public IReadOnlyList<string> Warnings => _warnings;

    /// <inheritdoc />
    public SampleBlock? Next()
    {
        SampleBlock block = _block;
        block.Count = 0;
        Span<double> values = stackalloc double[4];
        while (block.Count < block.Capacity)
        {
            if (!_reader.Read()) break;
            long line = _reader.LineNumber;
            if (!ParseRecord(values, out string? problem))
            {
                // A bad record at the very end of a file that does not end with a line break is a truncated last
                // line: dropped with a warning. Anywhere else it is an error.
                if (!_endsWithNewline && !_reader.Read())
                {
                    _warnings.Add($"{_file}:{line}: the last line is incomplete ({problem}); it was dropped");
                    break;
                }
                throw new InputException(new Problem(_file, (int)Math.Min(line, int.MaxValue), problem!));
            }
            int i = block.Count++;
            if (i == 0) block.LineBase = line;
            block.Time[i] = values[0] * _toSi[0];
            block.Piezo[i] = values[1] * _toSi[1];
            block.Bias[i] = values[2] * _toSi[2];
            block.Signal[i] = values[3] * _toSi[3];
            block.LineOffsets[i] = (int)(line - block.LineBase);
            if (!(block.Time[i] > _lastTime))
                throw new InputException(new Problem(_file, (int)line, $"column '{_names[0]}': time does not increase ({values[0]} after the value on line {_lastTimeLine})"));
            _lastTime = block.Time[i];
            _lastTimeLine = line;
        }
        return block.Count > 0 ? block : null;
    }

    private bool ParseRecord(Span<double> values, out string? problem)
    {
        ReadOnlySpan<byte> record = _reader.RawRecord;
        problem = null;
        if (record.IndexOf((byte)'"') < 0) return ChunkParsing.Careful(record, _separator, _index, _fieldCount, _names, values, out problem);
        // Quoted fields: CsvHelper unquotes them.
        if (_reader.FieldCount != _fieldCount)
        {
            problem = $"the row has {_reader.FieldCount} fields, the header {_fieldCount}";
            return false;
        }
        for (int c = 0; c < 4; c++)
            if (!ChunkParsing.Cell(_reader.GetSpan(_index[c]), _names[c], out values[c], out problem)) return false;
        return true;
    }

    /// <inheritdoc />
    public void Dispose()
    {
        _reader.Dispose();
        _stream.Dispose();
    }
}
