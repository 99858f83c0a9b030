using System.Globalization;
using System.Text;
using CsvHelper;

namespace ForceFit.Analysis.Tables;

/// <summary>
/// Writes output tables (run-files.md, Outputs): comma separated, a header row, invariant culture, "\n" line
/// ends, numbers with round-trip digits. A file is written to a temporary name beside the target and moved into
/// place only when complete, so a reader never sees half a table.
/// </summary>
public static class CsvTable
{
    /// <summary>Formats a number with round-trip digits in the invariant culture.</summary>
    public static string Number(double value) => value.ToString("R", CultureInfo.InvariantCulture);

    /// <summary>Writes the header and rows to <paramref name="path"/> atomically.</summary>
    public static void Write(string path, IReadOnlyList<string> header, IEnumerable<IReadOnlyList<string>> rows)
    {
        string full = Path.GetFullPath(path);
        string folder = Path.GetDirectoryName(full) ?? ".";
        Directory.CreateDirectory(folder);
        string temporary = Path.Combine(folder, "." + Path.GetFileName(full) + "." + Guid.NewGuid().ToString("N")[..8] + ".partial");
        try
        {
            using (var stream = new FileStream(temporary, FileMode.CreateNew, FileAccess.Write))
            {
                WriteTo(stream, header, rows);
            }
            File.Move(temporary, full, overwrite: true);
        }
        finally
        {
            if (File.Exists(temporary)) File.Delete(temporary);
        }
    }

    /// <summary>Writes the table to a stream.</summary>
    public static void WriteTo(Stream stream, IReadOnlyList<string> header, IEnumerable<IReadOnlyList<string>> rows)
    {
        var options = new CsvWriterOptions { NewLine = "\n", FormatProvider = CultureInfo.InvariantCulture };
        using CsvWriter writer = CsvWriter.Create(stream, options, leaveOpen: true);
        foreach (string h in header) writer.WriteField(h);
        writer.EndRecord();
        foreach (IReadOnlyList<string> row in rows)
        {
            if (row.Count != header.Count) throw new ArgumentException("a row has a different number of fields from the header");
            foreach (string field in row) writer.WriteField(field);
            writer.EndRecord();
        }
    }

    /// <summary>The table as text, for tests and reports.</summary>
    public static string ToText(IReadOnlyList<string> header, IEnumerable<IReadOnlyList<string>> rows)
    {
        using var memory = new MemoryStream();
        WriteTo(memory, header, rows);
        return Encoding.UTF8.GetString(memory.ToArray());
    }
}
