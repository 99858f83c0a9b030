using ForceFit.Core.Problems;
using ForceFit.Core.Units;

namespace ForceFit.Ingest.RunFiles;

/// <summary>
/// Reads typed values out of one TOML table, collecting problems that name the file, line and key,
/// and remembering which keys were read so that the rest can be reported as unknown.
/// </summary>
internal sealed class TableReader
{
    private readonly TomlTableNode _table;
    private readonly string _label;
    private readonly string _missingFile;
    private readonly List<Problem> _problems;
    private readonly HashSet<string> _known = new(StringComparer.Ordinal);

    /// <param name="table">The table.</param>
    /// <param name="label">How the table is named in messages, e.g. "[sphere]" or "the top level".</param>
    /// <param name="missingFile">The file named when a required key is missing.</param>
    /// <param name="problems">Where problems go.</param>
    public TableReader(TomlTableNode table, string label, string missingFile, List<Problem> problems)
    {
        _table = table;
        _label = label;
        _missingFile = missingFile;
        _problems = problems;
    }

    public string Label => _label;

    /// <summary>Declares keys as known without reading them.</summary>
    public void Allow(params string[] keys)
    {
        foreach (string key in keys) _known.Add(key);
    }

    public bool Has(string key) => _table.Entries.ContainsKey(key);

    public TomlNode? Node(string key)
    {
        _known.Add(key);
        return _table.Entries.GetValueOrDefault(key);
    }

    public void Error(TomlNode at, string message) => _problems.Add(new Problem(at.File, at.Line, message));

    public void Missing(string key, string? why = null) =>
        _problems.Add(new Problem(_missingFile, null, $"missing required key '{key}' in {_label}" + (why is null ? "" : $" ({why})")));

    private string Where(string key) => $"{key} in {_label}";

    /// <summary>A string value, or null when absent (a problem if required) or of another type.</summary>
    public string? Text(string key, bool required, string? why = null)
    {
        TomlNode? node = Node(key);
        if (node is null)
        {
            if (required) Missing(key, why);
            return null;
        }
        if (node is TomlScalar { Value: string s }) return s;
        Error(node, $"{Where(key)}: expected a string, got {node.KindName}");
        return null;
    }

    /// <summary>One of a fixed set of words, or null when absent or not one of them.</summary>
    public T? Choice<T>(string key, bool required, IReadOnlyDictionary<string, T> words, string? why = null) where T : struct
    {
        string? text = Text(key, required, why);
        if (text is null) return null;
        if (words.TryGetValue(text, out T value)) return value;
        string known = string.Join(", ", words.Keys.Select(w => $"'{w}'"));
        string near = Suggest.Nearest(text, words.Keys) is { } n ? $"; did you mean '{n}'?" : "";
        Error(Node(key)!, $"{Where(key)}: '{text}' is not one of {known}{near}");
        return null;
    }

    /// <summary>
    /// A quantity of a dimension. Returns null when absent, when "auto" (then <paramref name="isAuto"/> is true),
    /// or when wrong (a problem is recorded).
    /// </summary>
    public Measurement? Quantity(string key, Dimension dimension, bool required, bool allowAuto, out bool isAuto, string? why = null)
    {
        isAuto = false;
        TomlNode? node = Node(key);
        if (node is null)
        {
            if (required) Missing(key, why);
            return null;
        }
        string text;
        switch (node)
        {
            case TomlScalar { Value: string s }:
                text = s;
                break;
            case TomlScalar { Value: long or double } number when dimension == Dimension.Dimensionless:
                return Measurement.Exact(Convert.ToDouble(number.Value, System.Globalization.CultureInfo.InvariantCulture), dimension);
            case TomlScalar { Value: long or double }:
                Error(node, $"{Where(key)}: a bare number has no unit; write it as a string with a unit ({dimension.ExampleUnits()}), e.g. \"{Example(dimension)}\"");
                return null;
            default:
                Error(node, $"{Where(key)}: expected a quantity string, got {node.KindName}");
                return null;
        }
        if (text.Trim() == "auto")
        {
            if (allowAuto)
            {
                isAuto = true;
                return null;
            }
            Error(node, $"{Where(key)}: 'auto' is not allowed here; give a value");
            return null;
        }
        if (QuantityParser.TryParse(text, dimension, out Measurement m, out string error)) return m;
        Error(node, $"{Where(key)}: {error}");
        return null;
    }

    /// <summary>A quantity that may not be "auto".</summary>
    public Measurement? Quantity(string key, Dimension dimension, bool required, string? why = null) =>
        Quantity(key, dimension, required, allowAuto: false, out _, why);

    /// <summary>Records a problem when a present value fails a check.</summary>
    public void Check(string key, Measurement? value, Func<double, bool> ok, string requirement)
    {
        if (value is { } m && !ok(m.Value))
            Error(Node(key)!, $"{Where(key)}: must be {requirement}, got '{((TomlScalar)Node(key)!).Value}'");
    }

    /// <summary>A [header] or inline table, or null when absent or not a table.</summary>
    public TomlTableNode? Table(string key, bool required)
    {
        TomlNode? node = Node(key);
        if (node is null)
        {
            if (required) _problems.Add(new Problem(_missingFile, null, $"missing required table [{key}]"));
            return null;
        }
        if (node is TomlTableNode table) return table;
        Error(node, $"{Where(key)}: expected a table, got {node.KindName}");
        return null;
    }

    /// <summary>Reports every key that was neither read nor allowed, with the nearest known key.</summary>
    public void Finish()
    {
        foreach (string key in _table.Order)
        {
            if (_known.Contains(key)) continue;
            TomlNode node = _table.Entries[key];
            string? near = Suggest.Nearest(key, _known);
            string hint = near is not null
                ? $"; did you mean '{near}'?"
                : $"; known keys: {string.Join(", ", _known.Order(StringComparer.Ordinal))}";
            _problems.Add(new Problem(node.File, node.Line, $"unknown key '{key}' in {_label}{hint}"));
        }
    }

    private static string Example(Dimension dimension) => dimension switch
    {
        Dimension.Length => "100 nm",
        Dimension.Time => "0.3 s",
        Dimension.Frequency => "25 kHz",
        Dimension.Voltage => "20 mV",
        Dimension.Temperature => "295 K",
        Dimension.SpringConstant => "0.02 N/m",
        Dimension.AngularFrequency => "9.0 eV",
        Dimension.AngularFrequencySquared => "7.1 eV^2",
        _ => "1.0",
    };
}

/// <summary>Nearest-word suggestions for typos (Levenshtein distance).</summary>
public static class Suggest
{
    /// <summary>The closest candidate within a distance that still looks like a typo, or null.</summary>
    public static string? Nearest(string word, IEnumerable<string> candidates)
    {
        string? best = null;
        int bestDistance = int.MaxValue;
        foreach (string c in candidates.Order(StringComparer.Ordinal))
        {
            int d = Distance(word.ToLowerInvariant(), c.ToLowerInvariant());
            if (d < bestDistance)
            {
                best = c;
                bestDistance = d;
            }
        }
        int allowed = Math.Max(2, word.Length / 3);
        return bestDistance <= allowed ? best : null;
    }

    /// <summary>Levenshtein edit distance.</summary>
    public static int Distance(string a, string b)
    {
        var previous = new int[b.Length + 1];
        var current = new int[b.Length + 1];
        for (int j = 0; j <= b.Length; j++) previous[j] = j;
        for (int i = 1; i <= a.Length; i++)
        {
            current[0] = i;
            for (int j = 1; j <= b.Length; j++)
            {
                int cost = a[i - 1] == b[j - 1] ? 0 : 1;
                current[j] = Math.Min(Math.Min(current[j - 1] + 1, previous[j] + 1), previous[j - 1] + cost);
            }
            (previous, current) = (current, previous);
        }
        return previous[b.Length];
    }
}
