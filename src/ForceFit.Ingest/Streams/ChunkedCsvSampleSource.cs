using System.Text;
using ForceFit.Core.Problems;
using ForceFit.Ingest.Data;
using ForceFit.Ingest.RunFiles;

namespace ForceFit.Ingest.Streams;

/// <summary>
/// The fast reader for plain numeric CSV/TSV: the file is read in 8 MB chunks cut at line breaks, and the chunks
/// are parsed on worker threads while the caller consumes earlier ones, so parsing runs in parallel with the step
/// analysis. Line numbers stay exact (each chunk counts its line breaks). Comment lines ('#') and empty lines are
/// skipped anywhere. A chunk with a quote character is handed to <see cref="CsvSampleSource"/>'s rules by falling
/// back for the whole file (see <see cref="SampleSources.Open"/>): quoted numbers are rare in instrument files.
/// </summary>
public sealed class ChunkedCsvSampleSource : ISampleSource
{
    private const int ChunkBytes = 8 << 20;
    private readonly string _file;
    private readonly FileStream _stream;
    private readonly int[] _index;
    private readonly double[] _toSi;
    private readonly string[] _names;
    private readonly byte _separator;
    private readonly int _fieldCount;
    private readonly List<string> _warnings = [];
    private readonly Queue<Task<Parsed>> _queue = new();
    // Chunk buffers and parsed arrays are reused: allocating them per chunk (large-object heap) forces full collections.
    private readonly System.Collections.Concurrent.ConcurrentBag<byte[]> _freeChunks = [];
    private readonly System.Collections.Concurrent.ConcurrentBag<Parsed> _freeParsed = [];
    private byte[] _carry = [];
    private long _nextLine;
    private bool _eof;
    private Parsed? _current;
    private int _currentPosition;
    private double _lastTime = double.NegativeInfinity;
    private long _lastTimeLine;

    /// <summary>Opens the file (read-only), maps the columns and positions after the header line.</summary>
    public ChunkedCsvSampleSource(RunSettings run)
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
        // Skip to the line after the header.
        long offset = 0;
        int line = 0;
        var buffer = new byte[1 << 16];
        int read = _stream.Read(buffer);
        int at = read >= 3 && buffer[0] == 0xEF && buffer[1] == 0xBB && buffer[2] == 0xBF ? 3 : 0;
        while (line < header.HeaderLine)
        {
            int nl = Array.IndexOf(buffer, (byte)'\n', at, read - at);
            if (nl < 0) throw new InputException(new Problem(_file, header.HeaderLine, "the header line is longer than 64 kB"));
            at = nl + 1;
            line++;
        }
        offset = at;
        _stream.Seek(offset, SeekOrigin.Begin);
        _nextLine = header.HeaderLine + 1;
        for (int i = 0; i < 3; i++) Schedule();
    }

    /// <summary>True when a file can take the fast path: no quote character in its first 64 kB of data.</summary>
    public static bool Suits(string file)
    {
        using var s = new FileStream(file, FileMode.Open, FileAccess.Read, FileShare.Read);
        var buffer = new byte[1 << 16];
        int n = s.Read(buffer);
        return buffer.AsSpan(0, n).IndexOf((byte)'"') < 0;
    }

    /// <inheritdoc />
    public long BytesRead { get; private set; }

    /// <inheritdoc />
    public long Length { get; }

    /// <inheritdoc />
    public IReadOnlyList<string> Warnings => _warnings;

    private sealed class Parsed
    {
        public double[] T = [], P = [], V = [], S = [];
        public long[] Lines = [];
        public int Count;
        public Problem? Error;
        public bool Quoted;
        public bool Final;
        public string? DroppedLast;
    }

    private void Schedule()
    {
        if (_eof) return;
        byte[] chunk = _freeChunks.TryTake(out byte[]? reused) ? reused : new byte[ChunkBytes];
        Buffer.BlockCopy(_carry, 0, chunk, 0, _carry.Length);
        int filled = _carry.Length;
        int n;
        while (filled < chunk.Length && (n = _stream.Read(chunk, filled, chunk.Length - filled)) > 0) filled += n;
        bool final = filled < chunk.Length;
        int end = final ? filled : Array.LastIndexOf(chunk, (byte)'\n', filled - 1) + 1;
        if (end <= 0)
        {
            if (!final) throw new InputException(new Problem(_file, (int)_nextLine, "a line is longer than 8 MB"));
            end = filled;
        }
        _carry = chunk.AsSpan(end, filled - end).ToArray();
        if (final) _eof = true;
        long firstLine = _nextLine;
        int newlines = chunk.AsSpan(0, end).Count((byte)'\n');
        _nextLine += newlines;
        BytesRead = _stream.Position - _carry.Length;
        byte[] data = chunk;
        int length = end;
        _queue.Enqueue(Task.Run(() => Parse(data, length, firstLine, final)));
    }

    private Parsed Parse(byte[] data, int length, long firstLine, bool final)
    {
        int estimate = Math.Max(16, length / 24);
        Parsed r = _freeParsed.TryTake(out Parsed? old) ? old : new Parsed();
        if (r.T.Length < estimate)
        {
            r.T = new double[estimate]; r.P = new double[estimate]; r.V = new double[estimate]; r.S = new double[estimate]; r.Lines = new long[estimate];
        }
        r.Count = 0; r.Error = null; r.Quoted = false; r.DroppedLast = null; r.Final = final;
        ReadOnlySpan<byte> all = data.AsSpan(0, length);
        try
        {
            return ParseInto(r, all, length, firstLine, final);
        }
        finally
        {
            _freeChunks.Add(data);
        }
    }

    private Parsed ParseInto(Parsed r, ReadOnlySpan<byte> all, int length, long firstLine, bool final)
    {
        if (all.IndexOf((byte)'"') >= 0)
        {
            r.Quoted = true;
            return r;
        }
        Span<double> values = stackalloc double[4];
        long line = firstLine;
        int pos = 0;
        while (pos < length)
        {
            int nl = all[pos..].IndexOf((byte)'\n');
            bool last = nl < 0;
            ReadOnlySpan<byte> record = last ? all[pos..] : all.Slice(pos, nl);
            pos = last ? length : pos + nl + 1;
            if (record.Length > 0 && record[^1] == (byte)'\r') record = record[..^1];
            if (record.IsEmpty || record.Trim((byte)' ').IsEmpty || record[0] == (byte)'#')
            {
                line++;
                continue;
            }
            if (!ChunkParsing.Fast(record, _separator, _index, _fieldCount, values)
                && !ChunkParsing.Careful(record, _separator, _index, _fieldCount, _names, values, out string? problem))
            {
                if (last && final)
                {
                    r.DroppedLast = $"{_file}:{line}: the last line is incomplete ({problem}); it was dropped";
                    break;
                }
                r.Error = new Problem(_file, (int)Math.Min(line, int.MaxValue), problem!);
                break;
            }
            if (r.Count == r.T.Length) Grow(r);
            int i = r.Count++;
            r.T[i] = values[0] * _toSi[0];
            r.P[i] = values[1] * _toSi[1];
            r.V[i] = values[2] * _toSi[2];
            r.S[i] = values[3] * _toSi[3];
            r.Lines[i] = line;
            line++;
        }
        return r;
    }

    private static void Grow(Parsed r)
    {
        int size = r.T.Length * 2;
        Array.Resize(ref r.T, size);
        Array.Resize(ref r.P, size);
        Array.Resize(ref r.V, size);
        Array.Resize(ref r.S, size);
        Array.Resize(ref r.Lines, size);
    }

    /// <inheritdoc />
    public bool Read(SampleBlock block)
    {
        block.Count = 0;
        while (block.Count < block.Capacity)
        {
            if (_current is null || _currentPosition >= _current.Count)
            {
                if (_current?.Error is { } error) throw new InputException(error);
                if (_current?.DroppedLast is { } dropped)
                {
                    _warnings.Add(dropped);
                    _current.DroppedLast = null;
                }
                if (_queue.Count == 0) break;
                if (_current is not null) _freeParsed.Add(_current);
                _current = _queue.Dequeue().GetAwaiter().GetResult();
                _currentPosition = 0;
                if (_current.Quoted) throw new InputException(new Problem(_file, null, "quoted fields appear in the data after the first 64 kB; quote every row or none"));
                Schedule();
                continue;
            }
            int take = Math.Min(block.Capacity - block.Count, _current.Count - _currentPosition);
            for (int k = 0; k < take; k++)
            {
                int i = _currentPosition + k, j = block.Count + k;
                double t = _current.T[i];
                if (!(t > _lastTime))
                    throw new InputException(new Problem(_file, (int)_current.Lines[i], $"column '{_names[0]}': time does not increase ({t / _toSi[0]} after the value on line {_lastTimeLine})"));
                _lastTime = t;
                _lastTimeLine = _current.Lines[i];
                block.Time[j] = t;
                block.Piezo[j] = _current.P[i];
                block.Bias[j] = _current.V[i];
                block.Signal[j] = _current.S[i];
                block.Lines[j] = _current.Lines[i];
            }
            block.Count += take;
            _currentPosition += take;
        }
        return block.Count > 0;
    }

    /// <inheritdoc />
    public void Dispose()
    {
        while (_queue.Count > 0)
        {
            try { _queue.Dequeue().Wait(); } catch (AggregateException) { }
        }
        _stream.Dispose();
    }
}

/// <summary>Record parsing shared by the CSV readers.</summary>
internal static class ChunkParsing
{
    private static readonly double[] PowersOfTen = Enumerable.Range(0, 23).Select(k => Math.Pow(10, k)).ToArray();

    /// <summary>One pass over a record of plain numbers; false for anything unusual (then <see cref="Careful"/> decides).</summary>
    public static bool Fast(ReadOnlySpan<byte> record, byte separator, int[] index, int fieldCount, Span<double> values)
    {
        int i = 0, field = 0, found = 0;
        while (true)
        {
            int column = -1;
            for (int c = 0; c < 4; c++) if (index[c] == field) column = c;
            if (column < 0)
            {
                int next = record[i..].IndexOf(separator);
                field++;
                if (next < 0) break;
                i += next + 1;
                continue;
            }
            bool negative = false;
            if (i < record.Length && record[i] == (byte)'-') { negative = true; i++; }
            ulong mantissa = 0;
            int digits = 0, fraction = 0;
            uint d;
            while (i < record.Length && (d = (uint)(record[i] - '0')) <= 9) { mantissa = mantissa * 10 + d; digits++; i++; }
            if (i < record.Length && record[i] == (byte)'.')
            {
                i++;
                int fractionStart = i;
                while (i < record.Length && (d = (uint)(record[i] - '0')) <= 9) { mantissa = mantissa * 10 + d; digits++; i++; }
                fraction = i - fractionStart;
            }
            if (digits == 0 || digits > 15) return false;
            double v = fraction == 0 ? mantissa : mantissa / PowersOfTen[fraction];
            values[column] = negative ? -v : v;
            found++;
            field++;
            if (i == record.Length) break;
            if (record[i] != separator) return false;
            i++;
        }
        return found == 4 && field == fieldCount;
    }

    /// <summary>Parses one cell; on failure says what is wrong with it, naming the column.</summary>
    public static bool Cell(ReadOnlySpan<byte> cell, string column, out double value, out string? problem)
    {
        problem = null;
        if (!FastNumber.TryParse(cell, out value))
        {
            problem = cell.Trim((byte)' ').Length == 0
                ? $"column '{column}': the cell is empty"
                : $"column '{column}': '{Encoding.UTF8.GetString(cell)}' is not a number";
            return false;
        }
        if (!double.IsFinite(value))
        {
            problem = $"column '{column}': '{Encoding.UTF8.GetString(cell)}' is not a finite number";
            return false;
        }
        return true;
    }

    /// <summary>Splits at the separator and parses each mapped field, saying what is wrong when it fails.</summary>
    public static bool Careful(ReadOnlySpan<byte> record, byte separator, int[] index, int fieldCount, string[] names, Span<double> values, out string? problem)
    {
        problem = null;
        int field = 0, start = 0;
        for (int i = 0; i <= record.Length; i++)
        {
            if (i < record.Length && record[i] != separator) continue;
            for (int c = 0; c < 4; c++)
            {
                if (index[c] != field) continue;
                if (!Cell(record[start..i], names[c], out values[c], out problem)) return false;
            }
            field++;
            start = i + 1;
        }
        if (field != fieldCount)
        {
            problem = $"the row has {field} fields, the header {fieldCount}";
            return false;
        }
        return true;
    }
}
