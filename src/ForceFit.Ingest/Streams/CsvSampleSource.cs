using System.Text;
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
    private readonly int[] _index = new int[4];
    private readonly double[] _toSi = new double[4];
    private readonly string[] _names = new string[4];
    private readonly byte _separator;
    private readonly int _fieldCount;
    private readonly bool _endsWithNewline;
    private readonly List<string> _warnings = [];
    private double _lastTime = double.NegativeInfinity;
    private long _lastTimeLine;
    private bool _pending;

    /// <summary>Opens the run's data file (read-only) and maps its columns.</summary>
    public CsvSampleSource(RunSettings run)
    {
        _file = run.DataFile;
        DataFileHeader header = DataFileProbe.ReadHeader(_file);
        IReadOnlyList<Problem> missing = DataFileProbe.CheckColumns(run);
        if (missing.Count > 0) throw new InputException(missing);
        ColumnSettings signal = run.Columns.Frequency ?? run.Columns.Deflection!;
        if (run.Instrument.Mode == InstrumentMode.Deflection) signal = run.Columns.Deflection!;
        ColumnSettings[] columns = [run.Columns.Time, run.Columns.Piezo, run.Columns.Bias, signal];
        for (int c = 0; c < 4; c++)
        {
            _index[c] = header.Columns.ToList().IndexOf(columns[c].Name);
            _toSi[c] = columns[c].Unit.ToSi;
            _names[c] = columns[c].Name;
        }
        _fieldCount = header.Columns.Count;
        _separator = (byte)header.Delimiter;
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
    public bool Read(SampleBlock block)
    {
        block.Count = 0;
        Span<double> values = stackalloc double[4];
        while (block.Count < block.Capacity)
        {
            if (!_pending && !_reader.Read()) break;
            _pending = false;
            long line = _reader.LineNumber;
            if (!ParseRecord(values, line, out string? problem))
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
            block.Time[i] = values[0] * _toSi[0];
            block.Piezo[i] = values[1] * _toSi[1];
            block.Bias[i] = values[2] * _toSi[2];
            block.Signal[i] = values[3] * _toSi[3];
            block.Lines[i] = line;
            if (!(block.Time[i] > _lastTime))
                throw new InputException(new Problem(_file, (int)line, $"column '{_names[0]}': time does not increase ({values[0]} after the value on line {_lastTimeLine})"));
            _lastTime = block.Time[i];
            _lastTimeLine = line;
        }
        return block.Count > 0;
    }

    private bool ParseRecord(Span<double> values, long line, out string? problem)
    {
        ReadOnlySpan<byte> record = _reader.RawRecord;
        problem = null;
        if (FastRecord(record, values)) return true;
        if (record.IndexOf((byte)'"') >= 0) return ParseQuoted(values, out problem);
        // The careful path, which also says what is wrong: split at the separator, parse each mapped field.
        int field = 0, start = 0;
        for (int i = 0; i <= record.Length; i++)
        {
            if (i < record.Length && record[i] != _separator) continue;
            for (int c = 0; c < 4; c++)
                if (_index[c] == field && !Value(record[start..i], c, values, out problem)) return false;
            field++;
            start = i + 1;
        }
        if (field != _fieldCount)
        {
            problem = $"the row has {field} fields, the header {_fieldCount}";
            return false;
        }
        _ = line;
        return true;
    }

    /// <summary>
    /// One pass over a record of plain numbers: digits accumulate while the separators are found. Returns false
    /// for anything unusual (quotes, spaces, exponents, more than 15 digits, empty or extra fields), which then
    /// takes the careful path.
    /// </summary>
    private bool FastRecord(ReadOnlySpan<byte> record, Span<double> values)
    {
        int i = 0, field = 0, found = 0;
        byte separator = _separator;
        while (true)
        {
            int column = -1;
            for (int c = 0; c < 4; c++) if (_index[c] == field) column = c;
            if (column < 0)
            {
                int next = record[i..].IndexOf(separator);
                if (next < 0) { i = record.Length; field++; break; }
                i += next + 1;
                field++;
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
        return found == 4 && field == _fieldCount;
    }

    private static readonly double[] PowersOfTen = Enumerable.Range(0, 23).Select(k => Math.Pow(10, k)).ToArray();

    private bool ParseQuoted(Span<double> values, out string? problem)
    {
        problem = null;
        if (_reader.FieldCount != _fieldCount)
        {
            problem = $"the row has {_reader.FieldCount} fields, the header {_fieldCount}";
            return false;
        }
        for (int c = 0; c < 4; c++)
            if (!Value(_reader.GetSpan(_index[c]), c, values, out problem)) return false;
        return true;
    }

    private bool Value(ReadOnlySpan<byte> cell, int column, Span<double> values, out string? problem)
    {
        problem = null;
        if (!FastNumber.TryParse(cell, out double v))
        {
            problem = cell.Trim((byte)' ').Length == 0
                ? $"column '{_names[column]}': the cell is empty"
                : $"column '{_names[column]}': '{Encoding.UTF8.GetString(cell)}' is not a number";
            return false;
        }
        if (!double.IsFinite(v))
        {
            problem = $"column '{_names[column]}': '{Encoding.UTF8.GetString(cell)}' is not a finite number";
            return false;
        }
        values[column] = v;
        return true;
    }

    /// <inheritdoc />
    public void Dispose()
    {
        _reader.Dispose();
        _stream.Dispose();
    }
}
