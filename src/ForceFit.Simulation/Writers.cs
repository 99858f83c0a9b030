using System.Buffers;
using System.Buffers.Text;
using System.Globalization;
using System.Text;
using ForceFit.Core.Units;
using PureHDF;

namespace ForceFit.Simulation;

/// <summary>A data column as the simulated lab writes it: a name and a unit of the channel's dimension.</summary>
/// <param name="Name">Header name or HDF5 dataset path.</param>
/// <param name="Unit">Unit symbol, e.g. "nm", "mV", "kHz".</param>
/// <param name="ResolutionSi">The smallest step written, in SI (the number of decimals follows from it).</param>
public sealed record OutputColumn(string Name, string Unit, double ResolutionSi)
{
    /// <summary>The unit record.</summary>
    public Unit UnitRecord => Unit.Length == 0 ? UnitTable.Dimensionless : UnitTable.Find(Unit) ?? throw new ArgumentException($"unknown unit '{Unit}'");

    /// <summary>Decimals needed to resolve <see cref="ResolutionSi"/> in this unit.</summary>
    public int Decimals => Math.Max(0, (int)Math.Ceiling(-Math.Log10(UnitRecord.FromSiValue(ResolutionSi)) - 1e-9));
}

/// <summary>
/// Writes rows as comma-separated UTF-8 with fixed decimals per column, straight into a byte buffer
/// (no per-value strings): the simulator's large files are written at disk speed.
/// </summary>
public sealed class CsvSampleWriter : ISampleSink, IDisposable
{
    private readonly Stream _stream;
    private readonly OutputColumn[] _columns;
    private readonly Unit[] _units;
    private readonly StandardFormat[] _formats;
    private readonly int[] _decimals;
    private readonly byte[] _buffer = new byte[1 << 20];
    private int _used;

    /// <summary>Opens the file and writes the header (time, piezo, bias, signal columns in that order).</summary>
    public CsvSampleWriter(string path, IReadOnlyList<OutputColumn> columns, string comment)
    {
        _stream = new FileStream(path, FileMode.CreateNew, FileAccess.Write, FileShare.None, 1 << 16);
        _columns = columns.ToArray();
        _units = _columns.Select(c => c.UnitRecord).ToArray();
        _formats = _columns.Select(c => new StandardFormat('F', (byte)c.Decimals)).ToArray();
        _decimals = _columns.Select(c => c.Decimals).ToArray();
        var header = new StringBuilder();
        foreach (string line in comment.Split('\n')) header.Append("# ").Append(line).Append('\n');
        header.Append(string.Join(",", _columns.Select(c => c.Name))).Append('\n');
        byte[] bytes = Encoding.UTF8.GetBytes(header.ToString());
        _stream.Write(bytes);
    }

    /// <inheritdoc />
    public void Add(double time, double piezo, double bias, double signal)
    {
        if (_used > _buffer.Length - 256) Flush();
        Span<byte> span = _buffer.AsSpan(_used);
        int at = 0;
        Write(span, ref at, 0, time);
        span[at++] = (byte)',';
        Write(span, ref at, 1, piezo);
        span[at++] = (byte)',';
        Write(span, ref at, 2, bias);
        span[at++] = (byte)',';
        Write(span, ref at, 3, signal);
        span[at++] = (byte)'\n';
        _used += at;
    }

    private void Write(Span<byte> span, ref int at, int column, double si)
    {
        double value = _units[column].FromSiValue(si);
        int decimals = _decimals[column];
        double scaled = Math.Round(value * Pow10[decimals], MidpointRounding.AwayFromZero);
        if (Math.Abs(scaled) < 9e17)
        {
            at += WriteFixed(span[at..], (long)scaled, decimals);
            return;
        }
        if (!Utf8Formatter.TryFormat(value, span[at..], out int written, _formats[column]))
            throw new InvalidOperationException("value too long for the row buffer");
        at += written;
    }

    private static readonly double[] Pow10 = Enumerable.Range(0, 19).Select(i => Math.Pow(10, i)).ToArray();

    /// <summary>Writes n / 10^decimals with exactly that many decimals (the integer is the correctly rounded scaled value).</summary>
    private static int WriteFixed(Span<byte> span, long n, int decimals)
    {
        int at = 0;
        if (n < 0)
        {
            span[at++] = (byte)'-';
            n = -n;
        }
        Span<byte> digits = stackalloc byte[20];
        int count = 0;
        do
        {
            digits[count++] = (byte)('0' + (int)(n % 10));
            n /= 10;
        } while (n > 0 || count <= decimals);
        for (int i = count - 1; i >= 0; i--)
        {
            span[at++] = digits[i];
            if (i == decimals && decimals > 0) span[at++] = (byte)'.';
        }
        return at;
    }

    private void Flush()
    {
        _stream.Write(_buffer, 0, _used);
        _used = 0;
    }

    /// <summary>Writes what is buffered and closes the file.</summary>
    public void Dispose()
    {
        Flush();
        _stream.Dispose();
    }
}

/// <summary>Collects rows and writes them as 1-D HDF5 datasets with a "unit" attribute each.</summary>
public sealed class Hdf5SampleWriter : ISampleSink
{
    private readonly OutputColumn[] _columns;
    private readonly List<double>[] _values = [[], [], [], []];

    /// <summary>Prepares the writer for four columns (time, piezo, bias, signal).</summary>
    public Hdf5SampleWriter(IReadOnlyList<OutputColumn> columns) => _columns = columns.ToArray();

    /// <inheritdoc />
    public void Add(double time, double piezo, double bias, double signal)
    {
        _values[0].Add(_columns[0].UnitRecord.FromSiValue(time));
        _values[1].Add(_columns[1].UnitRecord.FromSiValue(piezo));
        _values[2].Add(_columns[2].UnitRecord.FromSiValue(bias));
        _values[3].Add(_columns[3].UnitRecord.FromSiValue(signal));
    }

    /// <summary>Writes the file; dataset paths are the column names (groups created as needed).</summary>
    public void Write(string path)
    {
        var file = new H5File();
        for (int c = 0; c < 4; c++)
        {
            string[] parts = _columns[c].Name.Trim('/').Split('/');
            H5Group group = file;
            foreach (string part in parts[..^1])
            {
                if (!group.TryGetValue(part, out object? next)) group[part] = next = new H5Group();
                group = (H5Group)next;
            }
            group[parts[^1]] = new H5Dataset(_values[c].ToArray()) { Attributes = new() { ["unit"] = _columns[c].Unit } };
        }
        file.Write(path);
    }
}

/// <summary>Formats numbers for run files and JSON: invariant culture, round-trip digits.</summary>
internal static class Text
{
    public static string N(double v) => v.ToString("R", CultureInfo.InvariantCulture);

    public static string Q(double si, string unit) => Measurement.Exact(si, DimensionOf(unit)).Format(unit);

    public static string Q(double si, double sigma, string unit) => new Measurement(si, sigma, DimensionOf(unit)).Format(unit);

    private static Dimension DimensionOf(string unit) => unit.Length == 0 ? Dimension.Dimensionless : UnitTable.Find(unit)!.Dimension switch
    {
        Dimension.Energy => Dimension.AngularFrequency,
        var d => d,
    };
}
