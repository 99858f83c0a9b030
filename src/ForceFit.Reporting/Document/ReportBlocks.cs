using System.Net;
using System.Text;
using ForceFit.Reporting.Figures;

namespace ForceFit.Reporting.Document;

/// <summary>A piece of the report; the HTML and Markdown renderers draw the same blocks, so both say the same.</summary>
public abstract record Block;

/// <summary>A section heading (level 1–3).</summary>
/// <param name="Level">1 for the title.</param>
/// <param name="Text">Plain text.</param>
public sealed record Heading(int Level, string Text) : Block;

/// <summary>A paragraph of plain text.</summary>
/// <param name="Text">Plain text.</param>
public sealed record Paragraph(string Text) : Block;

/// <summary>A bulleted list; <paramref name="Alert"/> marks warnings and trust problems.</summary>
/// <param name="Items">Plain-text items.</param>
/// <param name="Alert">Shown highlighted.</param>
public sealed record Bullets(IReadOnlyList<string> Items, bool Alert = false) : Block;

/// <summary>A table of plain-text cells.</summary>
/// <param name="Header">Column headings.</param>
/// <param name="Rows">Rows of cells.</param>
public sealed record Table(IReadOnlyList<string> Header, IReadOnlyList<IReadOnlyList<string>> Rows) : Block;

/// <summary>A figure: inline SVG in HTML, a link to figures/ in Markdown.</summary>
/// <param name="Figure">The rendered figure.</param>
public sealed record FigureBlock(Figure Figure) : Block;

/// <summary>Draws blocks as a self-contained HTML page: styles inline, figures inline as SVG, no external reference.</summary>
public static class HtmlRenderer
{
    // Our own sober style: readable on a phone (fluid width, scrolling tables), printable (no backgrounds, figures kept whole).
    private const string Style = """
        body{font-family:Georgia,'Times New Roman',serif;color:#1d2430;max-width:62rem;margin:0 auto;padding:1rem 1.2rem;line-height:1.45}
        h1{font-size:1.6rem;border-bottom:2px solid #23395b;padding-bottom:.3rem}
        h2{font-size:1.25rem;margin-top:2rem;color:#23395b}
        h3{font-size:1.05rem}
        .scroll{overflow-x:auto}
        table{border-collapse:collapse;font-size:.88rem;margin:.6rem 0}
        th,td{border:1px solid #cfd5dc;padding:.25rem .5rem;text-align:left;vertical-align:top}
        th{background:#eef1f4}
        ul.alert{border-left:4px solid #c9651b;background:#fbf3ec;padding:.5rem 1rem .5rem 2rem}
        figure{margin:1rem 0;page-break-inside:avoid;break-inside:avoid}
        figure svg{max-width:100%;height:auto;display:block}
        figcaption{font-size:.88rem;color:#4a5563}
        code{font-family:Consolas,monospace;font-size:.85rem;word-break:break-all}
        @media print{body{max-width:none}th{background:none}ul.alert{background:none}}
        """;

    /// <summary>The whole page.</summary>
    public static string Render(string title, IEnumerable<Block> blocks)
    {
        var w = new StringBuilder();
        w.Append("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n");
        w.Append("<title>").Append(E(title)).Append("</title>\n<style>\n").Append(Style).Append("</style>\n</head>\n<body>\n");
        foreach (Block b in blocks) Append(w, b);
        w.Append("</body>\n</html>\n");
        return w.ToString();
    }

    private static void Append(StringBuilder w, Block block)
    {
        switch (block)
        {
            case Heading h:
                w.Append("<h").Append(h.Level).Append('>').Append(E(h.Text)).Append("</h").Append(h.Level).Append(">\n");
                break;
            case Paragraph p:
                w.Append("<p>").Append(E(p.Text)).Append("</p>\n");
                break;
            case Bullets l:
                w.Append(l.Alert ? "<ul class=\"alert\">\n" : "<ul>\n");
                foreach (string item in l.Items) w.Append("<li>").Append(E(item)).Append("</li>\n");
                w.Append("</ul>\n");
                break;
            case Table t:
                w.Append("<div class=\"scroll\"><table>\n<tr>");
                foreach (string h in t.Header) w.Append("<th>").Append(E(h)).Append("</th>");
                w.Append("</tr>\n");
                foreach (var row in t.Rows)
                {
                    w.Append("<tr>");
                    foreach (string cell in row) w.Append("<td>").Append(E(cell)).Append("</td>");
                    w.Append("</tr>\n");
                }
                w.Append("</table></div>\n");
                break;
            case FigureBlock f:
                w.Append("<figure id=\"fig-").Append(E(f.Figure.Name)).Append("\">\n").Append(InlineSvg(f.Figure.Svg, "fig-" + f.Figure.Name + "-")).Append('\n');
                w.Append("<figcaption><b>").Append(E(f.Figure.Title)).Append(".</b> ").Append(E(f.Figure.Caption)).Append("</figcaption>\n</figure>\n");
                break;
            default:
                throw new ArgumentOutOfRangeException(nameof(block), block.GetType().Name);
        }
    }

    /// <summary>HTML-escapes plain text (every text from the user's files passes here).</summary>
    public static string E(string text) => WebUtility.HtmlEncode(text);

    // The SVG document without its XML declaration, with a viewBox so that it scales to the page width, and its
    // element ids (clip paths) prefixed so that the figures of one page do not share ids.
    private static string InlineSvg(string svg, string idPrefix)
    {
        string body = System.Text.RegularExpressions.Regex.Replace(svg, "(id=\"|url\\(#|href=\"#)([A-Za-z_][\\w.-]*)", m => m.Groups[1].Value + idPrefix + m.Groups[2].Value);
        if (body.StartsWith("<?xml", StringComparison.Ordinal)) body = body[(body.IndexOf("?>", StringComparison.Ordinal) + 2)..].TrimStart();
        int open = body.IndexOf("<svg", StringComparison.Ordinal);
        if (open < 0) return "";
        int end = body.IndexOf('>', open);
        string tag = body[open..end];
        if (!tag.Contains("viewBox", StringComparison.Ordinal))
        {
            string? Attribute(string name)
            {
                int i = tag.IndexOf(" " + name + "=\"", StringComparison.Ordinal);
                if (i < 0) return null;
                int start = i + name.Length + 3;
                return tag[start..tag.IndexOf('"', start)];
            }
            if (Attribute("width") is { } width && Attribute("height") is { } height)
                body = body[..end] + $" viewBox=\"0 0 {width} {height}\" role=\"img\"" + body[end..];
        }
        return body[open..];
    }
}

/// <summary>Draws blocks as Markdown with figures linked from figures/.</summary>
public static class MarkdownRenderer
{
    /// <summary>The whole document.</summary>
    public static string Render(IEnumerable<Block> blocks)
    {
        var w = new StringBuilder();
        foreach (Block block in blocks)
        {
            switch (block)
            {
                case Heading h:
                    w.Append(new string('#', h.Level)).Append(' ').Append(E(h.Text)).Append("\n\n");
                    break;
                case Paragraph p:
                    w.Append(E(p.Text)).Append("\n\n");
                    break;
                case Bullets l:
                    foreach (string item in l.Items) w.Append(l.Alert ? "- **" : "- ").Append(E(item)).Append(l.Alert ? "**\n" : "\n");
                    w.Append('\n');
                    break;
                case Table t:
                    w.Append("| ").Append(string.Join(" | ", t.Header.Select(E))).Append(" |\n|");
                    w.Append(string.Concat(t.Header.Select(_ => " --- |"))).Append('\n');
                    foreach (var row in t.Rows) w.Append("| ").Append(string.Join(" | ", row.Select(E))).Append(" |\n");
                    w.Append('\n');
                    break;
                case FigureBlock f:
                    w.Append("![").Append(E(f.Figure.Title)).Append("](figures/").Append(f.Figure.Name).Append(".svg)\n\n");
                    w.Append('*').Append(E(f.Figure.Title)).Append(".* ").Append(E(f.Figure.Caption)).Append(" (PNG: `figures/").Append(f.Figure.Name).Append(".png`)\n\n");
                    break;
                default:
                    throw new ArgumentOutOfRangeException(nameof(blocks), block.GetType().Name);
            }
        }
        return w.ToString();
    }

    /// <summary>
    /// Markdown-escapes plain text (every text from the user's files passes here): the characters that open markup
    /// anywhere (\ ` * _ [ ] &lt; &gt; | ~), and a leading # - + or "1." that would start a heading or a list.
    /// </summary>
    public static string E(string s)
    {
        var b = new StringBuilder(s.Length + 8);
        int listDot = ListNumberEnd(s);
        for (int i = 0; i < s.Length; i++)
        {
            char ch = s[i];
            if (ch is '\n' or '\r') { b.Append(' '); continue; }
            bool lineStart = i == 0 && ch is '#' or '-' or '+' or '=' || i == listDot;
            if (lineStart || "\\`*_[]<>|~".Contains(ch)) b.Append('\\');
            b.Append(ch);
        }
        return b.ToString();
    }

    // The index of the '.' or ')' after leading digits ("12." would start a numbered list), or −1.
    private static int ListNumberEnd(string s)
    {
        int i = 0;
        while (i < s.Length && char.IsDigit(s[i])) i++;
        return i > 0 && i < s.Length && s[i] is '.' or ')' ? i : -1;
    }
}
