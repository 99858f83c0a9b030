using System.Globalization;
using System.Text;
using CsvHelper;
using ForceFit.Core.Problems;

namespace ForceFit.Ingest.Data;

/// <summary>A small numeric CSV table read whole: the requested columns as arrays, in file order.</summary>
/// <param name="File">The file.</param>
/// <param name="Columns">Column name to values.</param>
/// <param name="Lines">The 1-based line of each row.</param>
public sealed record NumericTable(string File, IReadOnlyDictionary<string, double[]> Columns, int[] Lines)
{
    /// <summary>Number of rows.</summary>
    public int Count => Lines.Length;

    /// <summary>
    /// Reads the named columns of a comma/semicolon/tab separated file with a header row and '#' comments.
    /// Every cell must be a finite number (invariant culture); problems name the file, line and column.
    /// </summary>
    public static NumericTable Read(string file, IReadOnlyList<string> columns)
    {
        Stream stream;
        try
        {
            stream = new FileStream(file, FileMode.Open, FileAccess.Read, FileShare.Read);
        }
        catch (Exception e) when (e is IOException or UnauthorizedAccessException)
        {
            throw new InputException(new Problem(file, null, $"cannot read the file: {e.Message}"));
        }
        using (stream)
        {
            var options = new CsvReaderOptions
            {
                HasHeader = true,
                CommentPrefix = '#',
                TrackLineNumbers = true,
                TrimWhitespace = true,
                SkipEmptyLines = true,
                FormatProvider = CultureInfo.InvariantCulture,
            };
            using CsvReader reader = CsvReader.Create(stream, options);
            IReadOnlyList<string> headers;
            try
            {
                headers = reader.Headers;
            }
            catch (Exception e) when (e is CsvFormatException or InvalidDataException)
            {
                throw new InputException(new Problem(file, null, $"not a readable CSV file: {e.Message}"));
            }
            if (headers.Count == 0) throw new InputException(new Problem(file, null, "the file is empty: no header line"));
            var index = new int[columns.Count];
            for (int c = 0; c < columns.Count; c++)
            {
                index[c] = IndexOf(headers, columns[c]);
                if (index[c] < 0)
                    throw new InputException(new Problem(file, null, $"column '{columns[c]}' is missing; the header has: {string.Join(", ", headers)}"));
            }
            var values = columns.Select(_ => new List<double>()).ToArray();
            var lines = new List<int>();
            while (reader.Read())
            {
                int line = (int)reader.LineNumber;
                if (reader.FieldCount != headers.Count)
                    throw new InputException(new Problem(file, line, $"the row has {reader.FieldCount} fields, the header {headers.Count}"));
                for (int c = 0; c < columns.Count; c++)
                {
                    ReadOnlySpan<byte> cell = reader[index[c]].Span;
                    if (!double.TryParse(cell, NumberStyles.Float, CultureInfo.InvariantCulture, out double v))
                        throw new InputException(new Problem(file, line, $"column '{columns[c]}': '{Encoding.UTF8.GetString(cell)}' is not a number"));
                    if (!double.IsFinite(v))
                        throw new InputException(new Problem(file, line, $"column '{columns[c]}': '{Encoding.UTF8.GetString(cell)}' is not a finite number"));
                    values[c].Add(v);
                }
                lines.Add(line);
            }
            if (lines.Count == 0) throw new InputException(new Problem(file, null, "the file has a header but no data rows"));
            var result = new Dictionary<string, double[]>(StringComparer.Ordinal);
            for (int c = 0; c < columns.Count; c++) result[columns[c]] = values[c].ToArray();
            return new NumericTable(file, result, lines.ToArray());
        }
    }

    private static int IndexOf(IReadOnlyList<string> headers, string name)
    {
        for (int i = 0; i < headers.Count; i++)
            if (string.Equals(headers[i].Trim(), name, StringComparison.Ordinal)) return i;
        return -1;
    }
}
