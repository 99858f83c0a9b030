using ForceFit.Core.Problems;
using Tomlyn.Parsing;
using Tomlyn.Syntax;

namespace ForceFit.Ingest.RunFiles;

/// <summary>A value read from a TOML file, remembering the file and 1-based line it came from.</summary>
public abstract record TomlNode(string File, int Line)
{
    /// <summary>A plain word for the kind of value, for messages ("a string", "a table").</summary>
    public abstract string KindName { get; }
}

/// <summary>A string, integer, float, boolean or date value.</summary>
public sealed record TomlScalar(string File, int Line, object Value) : TomlNode(File, Line)
{
    /// <inheritdoc />
    public override string KindName => Value switch
    {
        string => "a string",
        long => "an integer",
        double => "a float",
        bool => "a boolean",
        _ => "a date",
    };
}

/// <summary>An array of values (including an array of tables, [[name]]).</summary>
public sealed record TomlList(string File, int Line, IReadOnlyList<TomlNode> Items) : TomlNode(File, Line)
{
    /// <inheritdoc />
    public override string KindName => "an array";
}

/// <summary>A table (a [header] table or an inline { } table) with its entries in file order.</summary>
public sealed record TomlTableNode(string File, int Line, bool IsInline, IReadOnlyDictionary<string, TomlNode> Entries, IReadOnlyList<string> Order)
    : TomlNode(File, Line)
{
    /// <inheritdoc />
    public override string KindName => "a table";

    /// <summary>An empty table for a file.</summary>
    public static TomlTableNode Empty(string file) => new(file, 1, false, new Dictionary<string, TomlNode>(), []);
}

/// <summary>Reads TOML text into <see cref="TomlTableNode"/> trees with line numbers, using Tomlyn's syntax parser.</summary>
public static class TomlTree
{
    /// <summary>Parses TOML text; syntax errors become problems naming the file and line.</summary>
    /// <param name="text">The file's text.</param>
    /// <param name="file">The file name used in messages.</param>
    public static TomlTableNode Parse(string text, string file)
    {
        DocumentSyntax doc = SyntaxParser.Parse(text, file, validate: true);
        if (doc.HasErrors)
        {
            // Later syntax errors usually follow from the first one (an unclosed string swallows the rest),
            // so only the earliest is reported.
            DiagnosticMessage first = doc.Diagnostics.Where(d => d.Kind == DiagnosticMessageKind.Error)
                .OrderBy(d => d.Span.Start.Offset).First();
            throw new InputException(new Problem(file, first.Span.Start.Line + 1, "TOML syntax: " + first.Message));
        }
        var builder = new Builder(file);
        var root = builder.NewTable(1, inline: false);
        foreach (KeyValueSyntax kv in doc.KeyValues) builder.AddKeyValue(root, kv);
        foreach (TableSyntaxBase table in doc.Tables)
        {
            int line = table.Span.Start.Line + 1;
            List<string> path = KeyParts(table.Name!);
            MutableTable target;
            if (table is TableArraySyntax)
            {
                MutableTable parent = builder.Descend(root, path.Take(path.Count - 1), line);
                string last = path[^1];
                if (!parent.Entries.TryGetValue(last, out object? existing))
                {
                    existing = new MutableList(line);
                    parent.Add(last, existing);
                }
                if (existing is not MutableList list)
                    throw new InputException(new Problem(file, line, $"[[{string.Join('.', path)}]] repeats a key that is not an array of tables"));
                target = builder.NewTable(line, inline: false);
                list.Items.Add(target);
            }
            else
            {
                target = builder.Descend(root, path, line);
                target.Line = line;
            }
            foreach (KeyValueSyntax kv in table.Items) builder.AddKeyValue(target, kv);
        }
        return builder.Freeze(root);
    }

    /// <summary>The parts of a possibly dotted key, unquoted.</summary>
    private static List<string> KeyParts(KeySyntax key)
    {
        var parts = new List<string> { Part(key.Key!) };
        if (key.DotKeys is { } dots)
            foreach (DottedKeyItemSyntax dot in dots) parts.Add(Part(dot.Key!));
        return parts;
    }

    private static string Part(BareKeyOrStringValueSyntax key) => key switch
    {
        BareKeySyntax bare => bare.Key!.Text!,
        StringValueSyntax quoted => quoted.Value!,
        _ => key.ToString()!.Trim(),
    };

    private sealed class MutableTable(int line, bool inline)
    {
        public int Line = line;
        public readonly bool Inline = inline;
        public readonly Dictionary<string, object> Entries = new(StringComparer.Ordinal);
        public readonly List<string> Order = [];
        public void Add(string key, object value) { Entries[key] = value; Order.Add(key); }
    }

    private sealed class MutableList(int line)
    {
        public readonly int Line = line;
        public readonly List<object> Items = [];
    }

    private sealed class Builder(string file)
    {
        public MutableTable NewTable(int line, bool inline) => new(line, inline);

        public MutableTable Descend(MutableTable from, IEnumerable<string> path, int line)
        {
            MutableTable current = from;
            foreach (string part in path)
            {
                if (!current.Entries.TryGetValue(part, out object? next))
                {
                    next = new MutableTable(line, inline: false);
                    current.Add(part, next);
                }
                current = next switch
                {
                    MutableTable t => t,
                    MutableList { Items.Count: > 0 } l when l.Items[^1] is MutableTable last => last,
                    _ => throw new InputException(new Problem(file, line, $"'{part}' is already a value, not a table")),
                };
            }
            return current;
        }

        public void AddKeyValue(MutableTable table, KeyValueSyntax kv)
        {
            int line = kv.Span.Start.Line + 1;
            List<string> path = KeyParts(kv.Key!);
            MutableTable target = Descend(table, path.Take(path.Count - 1), line);
            string last = path[^1];
            if (target.Entries.ContainsKey(last))
                throw new InputException(new Problem(file, line, $"key '{last}' is given twice"));
            target.Add(last, Value(kv.Value!, line));
        }

        private object Value(ValueSyntax value, int line) => value switch
        {
            StringValueSyntax s => new TomlScalar(file, line, s.Value!),
            IntegerValueSyntax i => new TomlScalar(file, line, i.Value),
            FloatValueSyntax f => new TomlScalar(file, line, f.Value),
            BooleanValueSyntax b => new TomlScalar(file, line, b.Value),
            DateTimeValueSyntax d => new TomlScalar(file, line, d.Value),
            ArraySyntax a => ListOf(a, line),
            InlineTableSyntax t => InlineTable(t, line),
            _ => new TomlScalar(file, line, value.ToString() ?? ""),
        };

        private MutableList ListOf(ArraySyntax array, int line)
        {
            var list = new MutableList(line);
            foreach (ArrayItemSyntax item in array.Items) list.Items.Add(Value(item.Value!, item.Span.Start.Line + 1));
            return list;
        }

        private MutableTable InlineTable(InlineTableSyntax inline, int line)
        {
            var table = new MutableTable(line, inline: true);
            foreach (InlineTableItemSyntax item in inline.Items) AddKeyValue(table, item.KeyValue!);
            return table;
        }

        public TomlTableNode Freeze(MutableTable table)
        {
            var entries = new Dictionary<string, TomlNode>(StringComparer.Ordinal);
            foreach (string key in table.Order) entries[key] = Freeze(table.Entries[key]);
            return new TomlTableNode(file, table.Line, table.Inline, entries, table.Order.ToArray());
        }

        private TomlNode Freeze(object value) => value switch
        {
            TomlNode node => node,
            MutableTable t => Freeze(t),
            MutableList l => new TomlList(file, l.Line, l.Items.Select(Freeze).ToArray()),
            _ => throw new InvalidOperationException("unexpected TOML node"),
        };
    }
}
