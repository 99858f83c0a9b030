using System.Text.Json;
using System.Text.Json.Nodes;
using ForceFit.Core.Problems;

namespace ForceFit.Reporting;

/// <summary>
/// A Jupyter notebook (nbformat 4.5 JSON) that loads a report folder's CSV tables with pandas and redraws the
/// comparison figures with matplotlib, for students who restyle plots. It reads only files the report holds.
/// </summary>
public static class NotebookExport
{
    /// <summary>The tables the notebook reads, relative to the report folder.</summary>
    public static readonly string[] Tables = ["tables/reduced.csv", "tables/theory.csv", "tables/budget.csv", "tables/parabolas.csv", "tables/run-points.csv"];

    /// <summary>Builds the notebook for a report folder; <paramref name="reportPath"/> is written into it as the folder to read (relative to the notebook, or absolute).</summary>
    public static string Build(string reportFolder, string reportPath)
    {
        foreach (string t in Tables.Append("summary.json"))
            if (!File.Exists(Path.Combine(reportFolder, t)))
                throw new InputException(new Problem(Path.Combine(reportFolder, t), null, "not found: is this a report folder written by 'forcefit reduce'?"));
        string quantity = File.ReadLines(Path.Combine(reportFolder, "tables", "reduced.csv")).First().Split(',')[1];
        bool gradient = quantity == "force_gradient_N_per_m";
        string label = gradient ? "force gradient F' (N/m)" : "|force F| (N)";
        var cells = new JsonArray
        {
            Markdown("# ForceFit report tables\n\nThis notebook reads the CSV tables of a ForceFit report folder with pandas and redraws the comparison with matplotlib. Change `REPORT` if the folder moved; restyle freely. The numbers come from the tables, nothing is recomputed."),
            Code($"from pathlib import Path\nimport json\nimport numpy as np\nimport pandas as pd\nimport matplotlib.pyplot as plt\n\nREPORT = Path({JsonSerializer.Serialize(reportPath)})\nsummary = json.loads((REPORT / \"summary.json\").read_text())\nreduced = pd.read_csv(REPORT / \"tables/reduced.csv\")\ntheory = pd.read_csv(REPORT / \"tables/theory.csv\")\nbudget = pd.read_csv(REPORT / \"tables/budget.csv\")\nparabolas = pd.read_csv(REPORT / \"tables/parabolas.csv\")\nrun_points = pd.read_csv(REPORT / \"tables/run-points.csv\")\nQUANTITY = {JsonSerializer.Serialize(quantity)}\nreduced.head()"),
            Markdown("## Headline numbers\n\nChi-square, degrees of freedom and p-value of every theory (from `summary.json`)."),
            Code("pd.DataFrame([{k: c[k] for k in ('theory', 'chi2', 'dof', 'p_value', 'verdict')} for c in summary['comparison']])"),
            Markdown("## The night against every theory\n\nMeasured points with their total uncertainty (random and systematic in quadrature) and each theory's 95% Monte Carlo band, on log axes."),
            Code($"a_nm = reduced['separation_m'] * 1e9\nsign = 1 if reduced[QUANTITY].sum() >= 0 else -1\ntotal = np.hypot(reduced['sigma_random'], reduced['sigma_systematic'])\nfig, ax = plt.subplots(figsize=(7, 4.5))\nfor name, t in theory.groupby('theory', sort=False):\n    x = t['separation_m'] * 1e9\n    lo, hi = np.sort(np.vstack([sign * t['band_low'], sign * t['band_high']]), axis=0)\n    ax.fill_between(x, lo, hi, alpha=0.3, label=f'{{name}}: 95% band')\n    ax.plot(x, sign * t['value'], label=name)\nax.errorbar(a_nm, sign * reduced[QUANTITY], yerr=total, fmt='o', color='#23395b', ms=4, label='measured')\nax.set_xscale('log'); ax.set_yscale('log')\nax.set_xlabel('separation a (nm)'); ax.set_ylabel({JsonSerializer.Serialize(label)})\nax.legend(); plt.show()"),
            Markdown("## Residuals against each theory\n\nData minus theory over the point's total uncertainty (random and the theory's linearised band in quadrature). The points are correlated through the systematic errors; judge the agreement by the chi-square above."),
            Code("fig, ax = plt.subplots(figsize=(7, 3.5))\nfor name, t in theory.groupby('theory', sort=False):\n    sigma = np.hypot(reduced['sigma_random'].values, t['linear_sigma'].values)\n    ax.plot(a_nm, (reduced[QUANTITY].values - t['value'].values) / sigma, 'o-', label=name)\nfor level in (-2, 0, 2):\n    ax.axhline(level, color='grey', lw=0.8)\nax.set_xlabel('separation a (nm)'); ax.set_ylabel('(measured - theory) / sigma')\nax.legend(); plt.show()"),
            Markdown("## Error budget\n\nEvery source's standard uncertainty relative to the measured value."),
            Code("value = reduced.set_index('separation_m')[QUANTITY].abs()\nfig, ax = plt.subplots(figsize=(7, 4))\nfor source, b in budget.groupby('source', sort=False):\n    rel = b['contribution'].values / value.reindex(b['separation_m']).values\n    ax.plot(b['separation_m'] * 1e9, rel, lw=3 if source == 'total' else 1.2, label=source)\nax.set_xscale('log'); ax.set_yscale('log')\nax.set_xlabel('separation a (nm)'); ax.set_ylabel('relative standard uncertainty')\nax.legend(fontsize=8); plt.show()"),
            Markdown("## V0 against separation\n\nThe vertex of every bias parabola, per run."),
            Code("fig, ax = plt.subplots(figsize=(7, 3.5))\nfor run, p in parabolas.groupby('run', sort=False):\n    ax.errorbar(p['separation_m'] * 1e9, p['v0_V'] * 1e3, yerr=p['sigma_v0_V'] * 1e3, fmt='o', label=run)\nax.set_xlabel('separation a (nm)'); ax.set_ylabel('V0 (mV)')\nax.legend(); plt.show()"),
        };
        var notebook = new JsonObject
        {
            ["nbformat"] = 4,
            ["nbformat_minor"] = 5,
            ["metadata"] = new JsonObject
            {
                ["kernelspec"] = new JsonObject { ["name"] = "python3", ["display_name"] = "Python 3", ["language"] = "python" },
                ["language_info"] = new JsonObject { ["name"] = "python" },
            },
            ["cells"] = cells,
        };
        // Cell ids (nbformat 4.5): stable, from the cell's position.
        for (int i = 0; i < cells.Count; i++) cells[i]!["id"] = $"forcefit-{i:D2}";
        return notebook.ToJsonString(new JsonSerializerOptions { WriteIndented = true }) + "\n";
    }

    private static JsonArray Lines(string text)
    {
        string[] lines = text.Split('\n');
        return new JsonArray(lines.Select((l, i) => (JsonNode)(i < lines.Length - 1 ? l + "\n" : l)).ToArray());
    }

    private static JsonObject Markdown(string text) => new() { ["cell_type"] = "markdown", ["metadata"] = new JsonObject(), ["source"] = Lines(text) };

    private static JsonObject Code(string text) => new()
    {
        ["cell_type"] = "code",
        ["execution_count"] = null,
        ["metadata"] = new JsonObject(),
        ["outputs"] = new JsonArray(),
        ["source"] = Lines(text),
    };

    /// <summary>Writes the notebook (to a temporary file beside it first, then moved into place).</summary>
    public static void Write(string reportFolder, string notebookPath)
    {
        string full = Path.GetFullPath(notebookPath);
        string directory = Path.GetDirectoryName(full)!;
        Directory.CreateDirectory(directory);
        string relative = Path.GetRelativePath(directory, Path.GetFullPath(reportFolder));
        string text = Build(reportFolder, relative.Replace(Path.DirectorySeparatorChar, '/'));
        string temporary = Path.Combine(directory, "." + Path.GetFileName(full) + ".partial-" + Guid.NewGuid().ToString("N")[..8]);
        File.WriteAllText(temporary, text);
        File.Move(temporary, full, overwrite: true);
    }
}
