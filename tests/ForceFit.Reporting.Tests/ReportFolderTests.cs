using System.Text.RegularExpressions;
using System.Xml.Linq;
using ForceFit.Analysis.Comparison;
using ForceFit.Analysis.Reduction;
using ForceFit.Ingest.RunFiles;
using ForceFit.Reporting.Document;
using ForceFit.Simulation;

namespace ForceFit.Reporting.Tests;

/// <summary>
/// The report folder of a small simulated night whose title and run name carry hostile markup: every figure renders
/// headless to SVG and PNG, the HTML is self-contained and escapes the user's text, both documents hold every section.
/// </summary>
[TestFixture]
public sealed class ReportFolderTests
{
    private const string HostileTitle = "<script>alert('title')</script> & \"quotes\" ![x](http://example.invalid/a.png)";
    private const string HostileRun = "run-<img src=x onerror=alert(1)>";
    private string _root = "";
    private string _report = "";

    [OneTimeSetUp]
    public void ReduceOnce()
    {
        _root = Path.Combine(Path.GetTempPath(), "forcefit-tests", Guid.NewGuid().ToString("N"));
        string night = Path.Combine(_root, "night");
        var scenario = new Scenario { Runs = 1, Positions = 10, Biases = 5, StepDuration = 1.5, SampleRate = 200 };
        NightSimulator.Simulate(new SimulationRequest(night, scenario, 21, false, SimulationRequest.DefaultColumns(scenario.Mode, false)));
        File.Move(Path.Combine(night, "run-01.toml"), Path.Combine(night, HostileRun + ".toml"));
        string toml = File.ReadAllText(Path.Combine(night, "night.toml"));
        File.WriteAllText(Path.Combine(night, "night.toml"), Regex.Replace(toml, "^title = .*$", "title = '''" + HostileTitle + "'''", RegexOptions.Multiline));
        NightReduction reduction = NightPipeline.Reduce(RunFileReader.ReadNight(night), new ComparisonOptions(200, 5));
        _report = Path.Combine(_root, "report");
        ReportFolder.Write(reduction, _report, force: false, "forcefit reduce night --out report", DateTimeOffset.UnixEpoch, "test");
    }

    [OneTimeTearDown]
    public void Remove()
    {
        if (Directory.Exists(_root)) Directory.Delete(_root, recursive: true);
    }

    private static readonly string[] ExpectedFigures =
        ["steps-zoom", "parabolas", "v0-separation", "v0-time", "curvature", "curvature-residuals", "free-signal", "result", "theory-residuals", "budget"];

    [Test]
    public void Every_figure_is_written_as_well_formed_SVG_and_as_PNG()
    {
        string figures = Path.Combine(_report, "figures");
        string[] names = Directory.GetFiles(figures, "*.svg").Select(f => Path.GetFileNameWithoutExtension(f)).ToArray();
        Assert.That(names, Is.SupersetOf(ExpectedFigures));
        Assert.That(names.Count(n => n.StartsWith("raw-", StringComparison.Ordinal)), Is.EqualTo(1), "one raw-channel figure per run");
        byte[] pngSignature = [0x89, 0x50, 0x4E, 0x47, 0x0D, 0x0A, 0x1A, 0x0A]; // PNG specification (ISO/IEC 15948), section 5.2
        foreach (string name in names)
        {
            XDocument svg = XDocument.Parse(File.ReadAllText(Path.Combine(figures, name + ".svg")));
            Assert.That(svg.Root!.Name.LocalName, Is.EqualTo("svg"), name);
            Assert.That(svg.Descendants().Count(), Is.GreaterThan(20), name + " has content");
            byte[] png = File.ReadAllBytes(Path.Combine(figures, name + ".png"));
            Assert.That(png.Take(8), Is.EqualTo(pngSignature), name + ".png signature");
            Assert.That(png.Length, Is.GreaterThan(5000), name + ".png is not blank");
        }
    }

    [Test]
    public void The_HTML_is_self_contained_and_escapes_the_users_text()
    {
        string html = File.ReadAllText(Path.Combine(_report, "report.html"));
        Assert.That(html, Does.Not.Contain("<script"), "no script, in particular not the hostile title");
        Assert.That(html, Does.Not.Contain("<img"), "the hostile run name is not markup");
        Assert.That(html, Does.Contain("&lt;script&gt;alert("));
        Assert.That(html, Does.Contain("run-&lt;img src=x onerror=alert(1)&gt;"));
        Assert.That(Regex.IsMatch(html, "<[^>]*\\s(src|href|xlink:href)\\s*=", RegexOptions.IgnoreCase), Is.False, "no tag with a src or href attribute");
        // The only url() are the figures' own clip paths, by fragment, each defined once in the page.
        var ids = Regex.Matches(html, "\\sid=\"([^\"]+)\"").Select(m => m.Groups[1].Value).ToArray();
        Assert.That(ids, Is.Unique, "element ids are unique across the inlined figures");
        foreach (Match m in Regex.Matches(html, "url\\(([^)]*)\\)"))
            Assert.That(ids, Does.Contain(m.Groups[1].Value.TrimStart('#')), "url() points inside the page: " + m.Value);
        Assert.That(html, Does.Not.Contain("@import"));
        Assert.That(html, Does.Not.Contain("<link"));
        Assert.That(Regex.Matches(html, "<svg").Count, Is.EqualTo(ExpectedFigures.Length + 1), "every figure inline");
    }

    [Test]
    public void Both_documents_hold_every_section_in_order()
    {
        string[] sections = ["Headline results", "Figures", "Calibration per run", "The reduced night", "Comparison with theory", "Error budget", "Settings", "Provenance", "Assumptions"];
        string html = File.ReadAllText(Path.Combine(_report, "report.html"));
        string md = File.ReadAllText(Path.Combine(_report, "report.md"));
        int lastHtml = -1, lastMd = -1;
        foreach (string s in sections)
        {
            int h = html.IndexOf("<h2>" + s + "</h2>", StringComparison.Ordinal), m = md.IndexOf("## " + s + "\n", StringComparison.Ordinal);
            Assert.That(h, Is.GreaterThan(lastHtml), "HTML section " + s);
            Assert.That(m, Is.GreaterThan(lastMd), "Markdown section " + s);
            lastHtml = h;
            lastMd = m;
        }
        Assert.That(md, Does.Contain("\\<script\\>"), "the title is escaped in Markdown");
        Assert.That(md, Does.Contain("\\!\\[x\\]").Or.Contain("!\\[x\\]"), "no image link from the title");
        foreach (string figure in ExpectedFigures) Assert.That(md, Does.Contain("(figures/" + figure + ".svg)"));
        Assert.That(html, Does.Contain("SHA-256"));
    }

    /// <summary>
    /// tables/calibration-budget.csv: the steps are the run file's stated sigmas (scale 0.005, R 0.2 um, as the simulator
    /// writes them), the totals are the quadrature sums of the lines and equal summary.json's sigmas, and raising R moves k
    /// in proportion, d ln k / d ln R = 1: the sphere–plate electrostatic force is proportional to R for a ≪ R (PFA; the
    /// exact series differs by O(a/R) ~ 1e-3 here), so the same curvatures need a k larger by sigma_R / R.
    /// </summary>
    [Test]
    public void The_calibration_budget_lists_every_source_and_adds_up_to_the_quoted_sigmas()
    {
        string[] lines = File.ReadAllLines(Path.Combine(_report, "tables", "calibration-budget.csv"));
        Assert.That(lines[0], Is.EqualTo("run,source,step,gap_offset_m,spring_constant_N_per_m,deflection_sensitivity_m_per_unit"));
        var rows = lines.Skip(1).Select(l => l.Split(',')).ToDictionary(f => f[1], f => f);
        double V(string source, int column) => double.Parse(rows[source][column], System.Globalization.CultureInfo.InvariantCulture);
        Assert.That(rows.Keys, Is.SupersetOf(new[] { "statistical", "piezo scale", "radius", "amplitude", "reference-gap Casimir force", "total" }));
        using var scope = Assert.EnterMultipleScope();
        Assert.That(V("piezo scale", 2), Is.EqualTo(new Scenario().PiezoScaleSigma).Within(1e-12), "the scale is varied by its stated sigma");
        Assert.That(V("radius", 2), Is.EqualTo(Scenario.RadiusSigma).Within(1e-15), "R is varied by its stated sigma");
        var summary = System.Text.Json.Nodes.JsonNode.Parse(File.ReadAllText(Path.Combine(_report, "summary.json")))!["runs"]![0]!;
        foreach ((int column, string key) in new[] { (3, "z0_m"), (4, "spring_constant_N_per_m") })
        {
            double sum = rows.Keys.Where(k => k != "total").Sum(k => V(k, column) * V(k, column));
            Assert.That(Math.Sqrt(sum), Is.EqualTo(V("total", column)).Within(1e-6 * V("total", column)), key + ": total is the quadrature sum");
            Assert.That(V("total", column), Is.EqualTo(summary[key]!["sigma"]!.GetValue<double>()).Within(1e-6 * V("total", column)), key + ": as in summary.json");
        }
        double k = summary["spring_constant_N_per_m"]!["value"]!.GetValue<double>();
        double expected = k * Scenario.RadiusSigma / new Scenario().Radius;
        TestContext.Out.WriteLine($"k change for +sigma_R: {V("radius", 4):E4} N/m against k sigma_R/R = {expected:E4} (ratio {V("radius", 4) / expected:F4})");
        Assert.That(V("radius", 4) / expected, Is.EqualTo(1).Within(0.01), "d ln k / d ln R = 1");
    }

    [TestCase("1. not a list", "1\\. not a list")]
    [TestCase("# not a heading", "\\# not a heading")]
    [TestCase("a|b *c* _d_ `e` <f>", "a\\|b \\*c\\* \\_d\\_ \\`e\\` \\<f\\>")]
    [TestCase("z0 = 88.9 ± 0.4 nm", "z0 = 88.9 ± 0.4 nm")]
    public void Markdown_escaping_neutralises_markup_and_keeps_numbers_readable(string text, string expected)
    {
        Assert.That(MarkdownRenderer.E(text), Is.EqualTo(expected));
    }
}
