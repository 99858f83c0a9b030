using System.Text;
using ForceFit.Core.Problems;
using ForceFit.Ingest.RunFiles;
using PureHDF;

namespace ForceFit.Ingest.Data;

/// <summary>The kind of raw data file, from its extension.</summary>
public enum DataFileKind
{
    /// <summary>Delimited text: comma, semicolon or tab, detected from the header line.</summary>
    Delimited,
    /// <summary>HDF5, channels as 1-D datasets addressed by path.</summary>
    Hdf5,
}

/// <summary>What the top of a data file says: its kind, its columns (or datasets) and the delimiter.</summary>
/// <param name="Kind">CSV/TSV or HDF5.</param>
/// <param name="Columns">Header names, or 1-D dataset paths with their lengths.</param>
/// <param name="Delimiter">The detected delimiter for delimited text.</param>
/// <param name="HeaderLine">The 1-based line of the header (delimited text).</param>
public sealed record DataFileHeader(DataFileKind Kind, IReadOnlyList<string> Columns, char Delimiter, int HeaderLine)
{
    /// <summary>HDF5: datasets that are not 1-D, with their number of dimensions (not channels, named in errors).</summary>
    public IReadOnlyDictionary<string, int> OtherShapes { get; init; } = new Dictionary<string, int>();
}

/// <summary>Opens a data file far enough to list its columns and confirm a run's mapping.</summary>
public static class DataFileProbe
{
    /// <summary>CSV/TSV unless the extension is .h5 or .hdf5.</summary>
    public static DataFileKind KindOf(string path) =>
        Path.GetExtension(path).ToLowerInvariant() is ".h5" or ".hdf5" ? DataFileKind.Hdf5 : DataFileKind.Delimited;

    /// <summary>Reads the header (or the dataset list) of a data file; problems name the file.</summary>
    public static DataFileHeader ReadHeader(string path) =>
        KindOf(path) == DataFileKind.Hdf5 ? ReadHdf5(path) : ReadDelimitedHeader(path);

    /// <summary>Checks that every mapped column of a run exists in its data file.</summary>
    public static IReadOnlyList<Problem> CheckColumns(RunSettings run)
    {
        DataFileHeader header;
        try
        {
            header = ReadHeader(run.DataFile);
        }
        catch (InputException e)
        {
            return e.Problems;
        }
        var problems = new List<Problem>();
        if (header.Kind != DataFileKind.Hdf5 && header.Columns.Any(c => c.Any(ch => char.IsControl(ch) && ch != '\t' || ch == '\uFFFD')))
            return [new Problem(run.DataFile, header.HeaderLine, "the header line is not text (control or undecodable bytes): is this a CSV/TSV data file?")];
        foreach (var twice in header.Columns.GroupBy(c => c, StringComparer.Ordinal).Where(g => g.Count() > 1))
            problems.Add(new Problem(run.DataFile, header.HeaderLine, $"column '{twice.Key}' appears {twice.Count()} times in the header; column names must be unique"));
        foreach ((string channel, ColumnSettings column) in run.Columns.Mapped())
        {
            string wanted = header.Kind == DataFileKind.Hdf5 ? column.Name.TrimStart('/') : column.Name;
            if (header.Columns.Contains(wanted, StringComparer.Ordinal)) continue;
            if (header.OtherShapes.TryGetValue(wanted, out int rank))
            {
                problems.Add(new Problem(run.DataFile, null, $"dataset '{column.Name}' mapped to {channel} in {run.RunFile} has {rank} dimensions; a channel is a 1-D dataset"));
                continue;
            }
            string near = Suggest.Nearest(column.Name, header.Columns) is { } n ? $" (did you mean '{n}'?)" : "";
            string what = header.Kind == DataFileKind.Hdf5 ? "1-D dataset" : "column";
            problems.Add(new Problem(run.DataFile, header.Kind == DataFileKind.Hdf5 ? null : header.HeaderLine,
                $"{what} '{column.Name}' mapped to {channel} in {run.RunFile} is not in the file{near}; available: {string.Join(", ", header.Columns)}"));
        }
        return problems;
    }

    /// <summary>Detects the delimiter from the header line: whichever of tab, semicolon and comma occurs most outside quotes.</summary>
    public static char DetectDelimiter(string headerLine)
    {
        int tabs = 0, semicolons = 0, commas = 0;
        bool quoted = false;
        foreach (char c in headerLine)
        {
            if (c == '"') quoted = !quoted;
            else if (!quoted && c == '\t') tabs++;
            else if (!quoted && c == ';') semicolons++;
            else if (!quoted && c == ',') commas++;
        }
        if (tabs >= semicolons && tabs >= commas && tabs > 0) return '\t';
        if (semicolons >= commas && semicolons > 0) return ';';
        return ',';
    }

    /// <summary>Splits a header line at the delimiter, removing quotes (RFC 4180 "" escapes) and surrounding spaces.</summary>
    public static List<string> SplitHeader(string line, char delimiter)
    {
        var fields = new List<string>();
        var current = new StringBuilder();
        bool quoted = false;
        for (int i = 0; i < line.Length; i++)
        {
            char c = line[i];
            if (quoted)
            {
                if (c == '"' && i + 1 < line.Length && line[i + 1] == '"') { current.Append('"'); i++; }
                else if (c == '"') quoted = false;
                else current.Append(c);
            }
            else if (c == '"') quoted = true;
            else if (c == delimiter) { fields.Add(current.ToString().Trim()); current.Clear(); }
            else current.Append(c);
        }
        fields.Add(current.ToString().Trim());
        return fields;
    }

    private static DataFileHeader ReadDelimitedHeader(string path)
    {
        try
        {
            using var reader = new StreamReader(path, Encoding.UTF8, detectEncodingFromByteOrderMarks: true);
            int lineNumber = 0;
            while (reader.ReadLine() is { } line)
            {
                lineNumber++;
                if (line.Contains('\0'))
                    throw new InputException(new Problem(path, lineNumber, "this is not a text file (it contains NUL bytes); expected CSV or TSV text, or an .h5 file"));
                string trimmed = line.Trim();
                if (trimmed.Length == 0 || trimmed.StartsWith('#')) continue;
                char delimiter = DetectDelimiter(line);
                List<string> columns = SplitHeader(line, delimiter);
                return new DataFileHeader(DataFileKind.Delimited, columns, delimiter, lineNumber);
            }
            throw new InputException(new Problem(path, null, "the file is empty: no header line"));
        }
        catch (Exception e) when (e is IOException or UnauthorizedAccessException)
        {
            throw new InputException(new Problem(path, null, $"cannot read the file: {e.Message}"));
        }
    }

    private static DataFileHeader ReadHdf5(string path)
    {
        try
        {
            using var file = H5File.OpenRead(path);
            var names = new List<string>();
            var others = new Dictionary<string, int>(StringComparer.Ordinal);
            Collect(file, "", names, others);
            return new DataFileHeader(DataFileKind.Hdf5, names, '\0', 0) { OtherShapes = others };
        }
        catch (Exception e) when (e is IOException or UnauthorizedAccessException)
        {
            throw new InputException(new Problem(path, null, $"cannot read the file: {e.Message}"));
        }
        catch (Exception e) when (e is not InputException)
        {
            throw new InputException(new Problem(path, null, $"not a readable HDF5 file: {e.Message}"));
        }
    }

    private static void Collect(IH5Group group, string prefix, List<string> names, Dictionary<string, int> others)
    {
        foreach (IH5Object child in group.Children())
        {
            string name = prefix + "/" + child.Name;
            if (child is IH5Group sub) Collect(sub, name, names, others);
            else if (child is IH5Dataset dataset)
            {
                if (dataset.Space.Dimensions.Length == 1) names.Add(name.TrimStart('/'));
                else others[name.TrimStart('/')] = dataset.Space.Dimensions.Length;
            }
        }
    }
}
