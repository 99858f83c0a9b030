using System.Runtime.Intrinsics;
using System.Runtime.Intrinsics.X86;
using System.Text;
using ForceFit.Core.Problems;
using ForceFit.Ingest.Data;
using ForceFit.Ingest.RunFiles;

namespace ForceFit.Ingest.Streams;

/// <summary>
/// The fast reader for plain numeric CSV/TSV: the file is read in 8 MB chunks cut at line breaks, and the chunks
/// are parsed on worker threads (<see cref="RowParser"/>) while the caller consumes earlier ones, so parsing runs in
/// parallel with the step analysis. Line numbers stay exact (each chunk counts its lines). Comment lines ('#') and
/// empty lines are skipped anywhere. A chunk with a quote character is handed to <see cref="CsvSampleSource"/>'s
/// rules by falling back for the whole file (see <see cref="SampleSources.Open"/>): quoted numbers are rare in
/// instrument files.
/// </summary>
public sealed class ChunkedCsvSampleSource : ISampleSource
{
    private const int ChunkBytes = 8 << 20;
    // Room after a chunk's data: a sentinel line break and the 8-byte reads of the digit parser.
    private const int Slack = 64;
    private readonly string _file;
    private readonly FileStream _stream;
    private readonly RowParser _parser;
    private readonly string _timeName;
    private readonly double _timeToSi;
    private readonly List<string> _warnings = [];
    private readonly Queue<Task<Parsed>> _queue = new();
    // Chunk buffers and parsed blocks are reused: allocating them per chunk (large-object heap) forces full collections.
    private readonly System.Collections.Concurrent.ConcurrentBag<byte[]> _freeChunks = [];
    private readonly System.Collections.Concurrent.ConcurrentBag<Parsed> _freeParsed = [];
    private byte[] _carry = [];
    private long _nextLine;
    private bool _eof;
    private Parsed? _current;
    private double _lastTime = double.NegativeInfinity;
    private long _lastTimeLine;

    /// <summary>Opens the file (read-only), maps the columns and positions after the header line.</summary>
    public ChunkedCsvSampleSource(RunSettings run)
    {
        _file = run.DataFile;
        CsvLayout layout = CsvLayout.For(run);
        DataFileHeader header = layout.Header;
        _parser = new RowParser(_file, layout);
        _timeName = layout.Names[0];
        _timeToSi = layout.ToSi[0];
        _stream = new FileStream(_file, FileMode.Open, FileAccess.Read, FileShare.Read, 1 << 16);
        Length = _stream.Length;
        // Skip to the line after the header.
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
        _stream.Seek(at, SeekOrigin.Begin);
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

    private void Schedule()
    {
        if (_eof) return;
        byte[] chunk = _freeChunks.TryTake(out byte[]? reused) ? reused : new byte[ChunkBytes + Slack];
        Buffer.BlockCopy(_carry, 0, chunk, 0, _carry.Length);
        int filled = _carry.Length;
        int n;
        while (filled < ChunkBytes && (n = _stream.Read(chunk, filled, ChunkBytes - filled)) > 0) filled += n;
        bool final = filled < ChunkBytes;
        int end = final ? filled : Array.LastIndexOf(chunk, (byte)'\n', filled - 1) + 1;
        if (end <= 0)
        {
            if (!final) throw new InputException(new Problem(_file, (int)Math.Min(_nextLine, int.MaxValue), "a line is longer than 8 MB"));
            end = filled;
        }
        _carry = chunk.AsSpan(end, filled - end).ToArray();
        if (final) _eof = true;
        BytesRead = _stream.Position - _carry.Length;
        byte[] data = chunk;
        int length = end;
        _queue.Enqueue(Task.Run(() => Parse(data, length, final)));
    }

    private Parsed Parse(byte[] data, int length, bool final)
    {
        Parsed r = _freeParsed.TryTake(out Parsed? old) ? old : new Parsed(Math.Max(16, length / 24));
        try
        {
            _parser.Parse(data, length, final, r);
            return r;
        }
        finally
        {
            _freeChunks.Add(data);
        }
    }

    /// <inheritdoc />
    public SampleBlock? Next()
    {
        while (true)
        {
            if (_current is { } done)
            {
                // What the previous block ended on: a bad row, a dropped last line, or nothing.
                if (done.Error is { } error) throw new InputException(error(done.Block.LineBase));
                if (done.DroppedLast is { } dropped) _warnings.Add(dropped(done.Block.LineBase));
                _freeParsed.Add(done);
                _current = null;
            }
            if (_queue.Count == 0) return null;
            Parsed next = _queue.Dequeue().GetAwaiter().GetResult();
            if (next.Quoted) throw new InputException(new Problem(_file, null, "quoted fields appear in the data after the first 64 kB; quote every row or none"));
            next.Block.LineBase = _nextLine;
            _nextLine += next.Lines;
            _current = next;
            Schedule();
            SampleBlock block = next.Block;
            if (block.Count == 0) continue;
            // Time increases within a block (checked by the parser); here across blocks.
            double first = block.Time[0];
            if (!(first > _lastTime))
                throw new InputException(new Problem(_file, (int)Math.Min(block.LineOf(0), int.MaxValue),
                    $"column '{_timeName}': time does not increase ({first / _timeToSi} after the value on line {_lastTimeLine})"));
            _lastTime = block.Time[block.Count - 1];
            _lastTimeLine = block.LineOf(block.Count - 1);
            return block;
        }
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

/// <summary>One chunk's rows, parsed: the samples and what stopped the chunk, with lines relative to the chunk.</summary>
internal sealed class Parsed(int capacity)
{
    public SampleBlock Block { get; } = new(capacity);
    /// <summary>Lines in the chunk (the next chunk's first line is this many lines further).</summary>
    public long Lines { get; set; }
    /// <summary>The problem that ends the chunk, given the chunk's first line.</summary>
    public Func<long, Problem>? Error { get; set; }
    /// <summary>The warning for a dropped incomplete last line, given the chunk's first line.</summary>
    public Func<long, string>? DroppedLast { get; set; }
    /// <summary>The chunk holds a quote character.</summary>
    public bool Quoted { get; set; }
}

/// <summary>
/// Parses a chunk of rows into SI samples. Plain numbers take the fast path: each field's digits are read eight at
/// a time (SWAR: the byte-wise digit test and the multiply-shift combination of eight digits, as in D. Lemire,
/// "Number parsing at a gigabyte per second", Softw. Pract. Exp. 51, 1700 (2021)), and the decimal mantissa is
/// divided once by an exact power of ten, which rounds correctly when the mantissa is below 2^53 and the power at
/// most 10^22 (W. D. Clinger, PLDI 1990). Any other row (exponents, spaces, comments, a bad cell) goes through
/// <see cref="ChunkParsing.Careful"/>, which parses or names the problem.
/// </summary>
internal sealed class RowParser
{
    private static readonly double[] PowersOfTen = Enumerable.Range(0, 23).Select(k => Math.Pow(10, k)).ToArray();
    private static readonly ulong[] IntegerPowers = Enumerable.Range(0, 9).Select(k => (ulong)Math.Pow(10, k)).ToArray();
    private readonly string _file;
    private readonly int[] _index;
    private readonly double[] _toSi;
    private readonly string[] _names;
    private readonly byte _separator;
    private readonly int _fieldCount;

    // An explicit type initializer: the tables are then filled before any instance exists, so the fully optimised
    // hot methods (compiled at their first call, on an instance) read them without initialisation checks.
    static RowParser() { }

    public RowParser(string file, CsvLayout layout)
    {
        _file = file;
        _index = layout.Index;
        _toSi = layout.ToSi;
        _names = layout.Names;
        _separator = layout.Separator;
        _fieldCount = layout.FieldCount;
    }

    // Rows are parsed in windows of about this many bytes, so that the per-field scratch stays in the cache.
    private const int Window = 1 << 15;

    [ThreadStatic] private static int[]? t_positions;
    [ThreadStatic] private static double[]? t_values;

    /// <summary>Where a chunk's parse stands: its line, and the last time read with its line.</summary>
    private sealed class Cursor
    {
        public int Line;
        public int LastLine = -1;
        public double Last = double.NegativeInfinity;
    }

    /// <summary>
    /// Parses data[0..length) (whole lines; data has 64 bytes of room after them) into the block, window by window in
    /// three passes that each keep few values live: (1) the positions of every separator and line break, found 32
    /// bytes at a time by vector compares; (2) every field's number, independently of the others (<see cref="Field"/>);
    /// (3) rows assembled from the fields, converted to SI and checked for increasing time. A row that is not plain
    /// numbers with the right field count goes through the careful parser, which reads it or names its problem.
    /// </summary>
    public unsafe void Parse(byte[] data, int length, bool final, Parsed r)
    {
        SampleBlock block = r.Block;
        block.Count = 0;
        r.Error = null;
        r.DroppedLast = null;
        r.Quoted = data.AsSpan(0, length).IndexOf((byte)'"') >= 0;
        r.Lines = 0;
        if (r.Quoted) return;
        data[length] = (byte)'\n'; // sentinel: an unterminated last row ends in a line break too
        bool endsWithNewline = length > 0 && data[length - 1] == (byte)'\n';
        int[] positions = t_positions ??= new int[Window + 64];
        double[] values = t_values ??= new double[Window + 64];
        var cursor = new Cursor();
        fixed (byte* start = data)
        {
            int at = 0;
            // The line break that ends the last row: the file's own, or the sentinel after an unterminated row.
            int lastBreak = endsWithNewline ? length - 1 : length;
            while (at < length)
            {
                // The window: whole rows from at, at most Window bytes, ending in a line break.
                int cut = at + Window > lastBreak ? lastBreak : LastBreak(start + at, Window, at);
                if (cut < 0)
                {
                    // One row longer than the window: on its own through the careful parser.
                    int nl = at + new ReadOnlySpan<byte>(start + at, length + 1 - at).IndexOf((byte)'\n');
                    if (!Careful(new ReadOnlySpan<byte>(start + at, nl - at), final && nl == length && !endsWithNewline, block, cursor, r)) break;
                    at = nl + 1;
                    continue;
                }
                if (!ParseWindow(start + at, cut - at + 1, final && cut == length && !endsWithNewline, positions, values, block, cursor, r)) break;
                at = cut + 1;
            }
        }
        r.Lines = cursor.Line;
    }

    private static unsafe int LastBreak(byte* from, int length, int offset)
    {
        int k = new ReadOnlySpan<byte>(from, length).LastIndexOf((byte)'\n');
        return k < 0 ? -1 : offset + k;
    }

    /// <summary>The rows of w[0..length), whose last byte is a line break; false when a row ends the chunk with a problem.</summary>
    [System.Runtime.CompilerServices.MethodImpl(System.Runtime.CompilerServices.MethodImplOptions.AggressiveOptimization)]
    private unsafe bool ParseWindow(byte* w, int length, bool unterminated, int[] positionArray, double[] valueArray, SampleBlock block, Cursor cursor, Parsed r)
    {
        int count = 0;
        fixed (int* positions = positionArray)
        fixed (double* values = valueArray)
        {
            // (1) Separators and line breaks.
            var separator = Vector256.Create(_separator);
            var lineBreak = Vector256.Create((byte)'\n');
            for (int o = 0; o < length; o += 32)
            {
                Vector256<byte> v = Vector256.Load(w + o);
                uint mask = (Vector256.Equals(v, separator) | Vector256.Equals(v, lineBreak)).ExtractMostSignificantBits();
                if (length - o < 32) mask &= (1u << (length - o)) - 1;
                while (mask != 0)
                {
                    positions[count++] = o + System.Numerics.BitOperations.TrailingZeroCount(mask);
                    mask &= mask - 1;
                }
            }
            // (2) Every field's number (NaN when it is not a plain number).
            for (int k = 0, from = 0; k < count; k++)
            {
                int end = positions[k];
                int stop = w[end] == (byte)'\n' && end > from && w[end - 1] == (byte)'\r' ? end - 1 : end;
                values[k] = Field(w + from, stop - from);
                from = end + 1;
            }
            // (3) Rows.
            int last = _fieldCount - 1;
            int i0 = _index[0], i1 = _index[1], i2 = _index[2], i3 = _index[3];
            double k0 = _toSi[0], k1 = _toSi[1], k2 = _toSi[2], k3 = _toSi[3];
            for (int k = 0, rowStart = 0; k < count;)
            {
                int e = k + last;
                bool plain = e < count && w[positions[e]] == (byte)'\n';
                for (int j = k; plain && j < e; j++) plain = w[positions[j]] != (byte)'\n';
                for (int j = k; plain && j <= e; j++) plain = !double.IsNaN(values[j]);
                double t = plain ? values[k + i0] * k0 : 0;
                if (plain && t > cursor.Last)
                {
                    if (block.Count == block.Capacity) block.Grow();
                    int i = block.Count++;
                    block.Time[i] = t;
                    block.Piezo[i] = values[k + i1] * k1;
                    block.Bias[i] = values[k + i2] * k2;
                    block.Signal[i] = values[k + i3] * k3;
                    block.LineOffsets[i] = cursor.Line;
                    cursor.Last = t;
                    cursor.LastLine = cursor.Line++;
                    rowStart = positions[e] + 1;
                    k = e + 1;
                    continue;
                }
                // Anything else: to the row's line break, through the careful parser.
                int nl = k;
                while (w[positions[nl]] != (byte)'\n') nl++;
                if (!Careful(new ReadOnlySpan<byte>(w + rowStart, positions[nl] - rowStart), unterminated && nl == count - 1, block, cursor, r)) return false;
                rowStart = positions[nl] + 1;
                k = nl + 1;
            }
        }
        return true;
    }

    /// <summary>
    /// One row the fast passes did not take: skipped when empty or a comment, else parsed carefully, its time checked,
    /// and stored. False when it ends the chunk: an error, or an incomplete last line dropped with a warning.
    /// </summary>
    private bool Careful(ReadOnlySpan<byte> record, bool unterminatedLast, SampleBlock block, Cursor cursor, Parsed r)
    {
        if (record.Length > 0 && record[^1] == (byte)'\r') record = record[..^1];
        if (record.IsEmpty || record.Trim((byte)' ').IsEmpty || record[0] == (byte)'#')
        {
            cursor.Line++;
            return true;
        }
        Span<double> values = stackalloc double[4];
        int at = cursor.Line;
        if (!ChunkParsing.Careful(record, _separator, _index, _fieldCount, _names, values, out string? problem))
        {
            if (unterminatedLast)
                r.DroppedLast = first => $"{_file}:{first + at}: the last line is incomplete ({problem}); it was dropped";
            else
                r.Error = first => new Problem(_file, (int)Math.Min(first + at, int.MaxValue), problem!);
            return false;
        }
        double t = values[0] * _toSi[0];
        if (!(t > cursor.Last) && cursor.LastLine >= 0)
        {
            int previous = cursor.LastLine;
            double shown = values[0];
            r.Error = first => new Problem(_file, (int)Math.Min(first + at, int.MaxValue),
                $"column '{_names[0]}': time does not increase ({shown} after the value on line {first + previous})");
            return false;
        }
        cursor.Last = t;
        cursor.LastLine = cursor.Line++;
        if (block.Count == block.Capacity) block.Grow();
        int i = block.Count++;
        block.Time[i] = t;
        block.Piezo[i] = values[1] * _toSi[1];
        block.Bias[i] = values[2] * _toSi[2];
        block.Signal[i] = values[3] * _toSi[3];
        block.LineOffsets[i] = at;
        return true;
    }

    /// <summary>
    /// A field of <paramref name="length"/> bytes holding [-]digits[.digits] with at most 16 digits: on x86 the
    /// digits are gathered right-aligned by one byte shuffle (<see cref="Shuffles"/>, chosen by the field's length and
    /// point position) and combined by multiply-add steps of 2, 4 and 8 digits (the SIMD scheme of D. Lemire,
    /// "Number parsing at a gigabyte per second", Softw. Pract. Exp. 51, 1700 (2021)); elsewhere eight at a time in a
    /// 64-bit word (<see cref="Eight"/>). The mantissa is divided once by an exact power of ten, which rounds
    /// correctly when it is below 2^53 (W. D. Clinger, PLDI 1990). Longer numbers go through <see cref="FastNumber"/>.
    /// NaN when the field is not such a number.
    /// </summary>
    [System.Runtime.CompilerServices.MethodImpl(System.Runtime.CompilerServices.MethodImplOptions.AggressiveInlining)]
    private static unsafe double Field(byte* s, int length)
    {
        if ((uint)(length - 2) > 15) return LongField(s, length);
        int negative = *s == (byte)'-' ? 1 : 0;
        byte* digitsStart = s + negative;
        int n = length - negative;
        if (n > 16) return LongField(s, length);
        Vector128<byte> v = Vector128.Load(digitsStart) - Vector128.Create((byte)'0');
        uint points = Vector128.Equals(v, Vector128.Create(unchecked((byte)('.' - '0')))).ExtractMostSignificantBits() & ((1u << n) - 1);
        int whole = points == 0 ? n : System.Numerics.BitOperations.TrailingZeroCount(points);
        int fraction = points == 0 ? 0 : n - whole - 1;
        ulong mantissa;
        if (Sse41.IsSupported)
        {
            // A second point or any other byte survives the shuffle as a value above 9.
            Vector128<byte> digits = Ssse3.Shuffle(v, Vector128.Load(Shuffles + (n * 17 + whole) * 16));
            if (Vector128.GreaterThanAny(digits, Vector128.Create((byte)9)) || whole + fraction == 0) return LongField(s, length);
            Vector128<short> two = Ssse3.MultiplyAddAdjacent(digits, Vector128.Create((sbyte)10, 1, 10, 1, 10, 1, 10, 1, 10, 1, 10, 1, 10, 1, 10, 1));
            Vector128<int> four = Sse2.MultiplyAddAdjacent(two, Vector128.Create((short)100, 1, 100, 1, 100, 1, 100, 1));
            Vector128<short> packed = Sse41.PackUnsignedSaturate(four, four).AsInt16();
            Vector128<int> eight = Sse2.MultiplyAddAdjacent(packed, Vector128.Create((short)10000, 1, 10000, 1, 10000, 1, 10000, 1));
            mantissa = (ulong)(uint)eight.ToScalar() * 100_000_000UL + (uint)eight.GetElement(1);
        }
        else
        {
            if (whole > 8 || fraction > 8 || whole + fraction == 0) return LongField(s, length);
            ulong w = Eight(System.Runtime.CompilerServices.Unsafe.ReadUnaligned<ulong>(digitsStart), whole);
            ulong f = Eight(System.Runtime.CompilerServices.Unsafe.ReadUnaligned<ulong>(digitsStart + whole + 1), fraction);
            if ((w | f) == NotDigits) return double.NaN;
            mantissa = w * IntegerPowers[fraction] + f;
        }
        // At most 16 digits: below 2^53 only up to 15, so checked. (double)(long) converts in one instruction.
        if (mantissa > 1UL << 53) return LongField(s, length);
        double value = (long)mantissa / PowersOfTen[fraction];
        return negative != 0 ? -value : value;
    }

    /// <summary>
    /// For a field of n digit-or-point bytes (n up to 16) with its point at index p (p = n: none), at [n·17 + p]: the
    /// 16 byte indices that put its digits right-aligned, the point left out, and zeros (index 0x80) before them.
    /// </summary>
    private static readonly unsafe byte* Shuffles = BuildShuffles();

    private static unsafe byte* BuildShuffles()
    {
        var table = (byte*)System.Runtime.InteropServices.NativeMemory.AlignedAlloc(17 * 17 * 16, 16);
        for (int n = 0; n <= 16; n++)
        {
            for (int point = 0; point <= 16; point++)
            {
                int[] digits = Enumerable.Range(0, n).Where(j => j != point).ToArray();
                for (int j = 0; j < 16; j++)
                    table[(n * 17 + point) * 16 + j] = j < 16 - digits.Length ? (byte)0x80 : (byte)digits[j - (16 - digits.Length)];
            }
        }
        return table;
    }

    // Fields the vector path leaves (long numbers, one-byte and empty fields): the cell parser the careful path uses,
    // NaN (the careful path then names the problem) unless it reads a finite number.
    [System.Runtime.CompilerServices.MethodImpl(System.Runtime.CompilerServices.MethodImplOptions.NoInlining)]
    private static unsafe double LongField(byte* s, int length) =>
        FastNumber.TryParse(new ReadOnlySpan<byte>(s, length), out double value) && double.IsFinite(value) ? value : double.NaN;

    // What Eight returns when a byte is not a digit: all bits set, so that it survives an OR with a valid value (< 10^8).
    private const ulong NotDigits = ulong.MaxValue;

    /// <summary>The first n (0 to 8) bytes of x as decimal digits (first byte most significant), or <see cref="NotDigits"/>.</summary>
    [System.Runtime.CompilerServices.MethodImpl(System.Runtime.CompilerServices.MethodImplOptions.AggressiveInlining)]
    private static ulong Eight(ulong x, int n)
    {
        ulong keep = n >= 8 ? ulong.MaxValue : (1UL << (8 * n)) - 1;
        // A byte is a digit when its high nibble is 3 before and after adding 6.
        ulong bad = ((x & 0xF0F0F0F0F0F0F0F0UL) ^ 0x3030303030303030UL) | (((x + 0x0606060606060606UL) & 0xF0F0F0F0F0F0F0F0UL) ^ 0x3030303030303030UL);
        if ((bad & keep) != 0) return NotDigits;
        // The n digits moved to the top bytes (leading zero digits below), combined two, four, eight at a time.
        ulong d = ((x - 0x3030303030303030UL) & keep) << (64 - 8 * n);
        d = d * 10 + (d >> 8);
        return (((d & 0x000000FF000000FFUL) * (100 + (1000000UL << 32))) + (((d >> 16) & 0x000000FF000000FFUL) * (1 + (10000UL << 32)))) >> 32;
    }
}

/// <summary>Record parsing shared by the CSV readers.</summary>
internal static class ChunkParsing
{
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
