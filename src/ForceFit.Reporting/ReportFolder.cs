using System.Globalization;
using System.Security.Cryptography;
using System.Text;
using System.Text.Json;
using System.Text.Json.Nodes;
using ForceFit.Analysis.Comparison;
using ForceFit.Analysis.Reduction;
using ForceFit.Analysis.Tables;
using ForceFit.Core.Problems;
using ForceFit.Fitting;
using ForceFit.Ingest.RunFiles;
using ForceFit.Ingest.Steps;

using ForceFit.Reporting.Document;
using ForceFit.Reporting.Figures;

namespace ForceFit.Reporting;

/// <summary>An input file as recorded in the provenance.</summary>
/// <param name="Path">Full path.</param>
/// <param name="Bytes">Size.</param>
/// <param name="Sha256">SHA-256, lower-case hex.</param>
public sealed record InputFile(string Path, long Bytes, string Sha256);

/// <summary>
/// Writes a reduction's report folder (run-files.md, Outputs): summary.json, provenance.json, tables/steps.csv,
/// tables/parabolas.csv, tables/reduced.csv, tables/budget.csv and a plain report.md. Everything is written into a
/// temporary folder beside the target and moved into place at the end, so a failure never leaves half a report.
/// </summary>
public static class ReportFolder
{
    /// <summary>
    /// Checks the report folder before any work: not a file, not inside the night folder, not an existing folder
    /// without <paramref name="force"/>. Returns the full path.
    /// </summary>
    public static string CheckTarget(string outFolder, string nightFolder, bool force)
    {
        string target = Path.GetFullPath(outFolder).TrimEnd(Path.DirectorySeparatorChar);
        if (File.Exists(target)) throw new InputException(new Problem(target, null, "the output folder is a file"));
        if (Directory.Exists(target) && !force) throw new InputException(new Problem(target, null, "the output folder exists; add --force to replace it"));
        string night = Path.GetFullPath(nightFolder).TrimEnd(Path.DirectorySeparatorChar);
        if ((target + Path.DirectorySeparatorChar).StartsWith(night + Path.DirectorySeparatorChar, StringComparison.Ordinal))
            throw new InputException(new Problem(target, null, "the output folder lies inside the night folder; choose a folder outside the raw data"));
        return target;
    }

    /// <summary>Writes the report folder atomically; an existing folder is replaced only with <paramref name="force"/>.</summary>
    public static void Write(NightReduction reduction, string outFolder, bool force, string commandLine, DateTimeOffset now, string toolVersion)
    {
        string target = CheckTarget(outFolder, reduction.Night.Folder, force);
        string parent = Path.GetDirectoryName(target)!;
        Directory.CreateDirectory(parent);
        string temporary = Path.Combine(parent, "." + Path.GetFileName(target) + ".partial-" + Guid.NewGuid().ToString("N")[..8]);
        try
        {
            Directory.CreateDirectory(Path.Combine(temporary, "tables"));
            StepsTable.Write(Path.Combine(temporary, "tables", "steps.csv"), reduction.Segments);
            WriteParabolas(Path.Combine(temporary, "tables", "parabolas.csv"), reduction);
            WriteReduced(Path.Combine(temporary, "tables", "reduced.csv"), reduction);
            WriteRunPoints(Path.Combine(temporary, "tables", "run-points.csv"), reduction);
            WriteTheory(Path.Combine(temporary, "tables", "theory.csv"), reduction);
            WriteBudget(Path.Combine(temporary, "tables", "budget.csv"), reduction);
            WriteCalibrationBudget(Path.Combine(temporary, "tables", "calibration-budget.csv"), reduction);
            File.WriteAllText(Path.Combine(temporary, "summary.json"), Summary(reduction));
            IReadOnlyList<InputFile> inputs = Inputs(reduction);
            File.WriteAllText(Path.Combine(temporary, "provenance.json"), Provenance(reduction, inputs, commandLine, now, toolVersion));
            IReadOnlyList<Figure> figures = NightFigures.Draw(reduction);
            Directory.CreateDirectory(Path.Combine(temporary, "figures"));
            foreach (Figure f in figures)
            {
                File.WriteAllText(Path.Combine(temporary, "figures", f.Name + ".svg"), f.Svg);
                File.WriteAllBytes(Path.Combine(temporary, "figures", f.Name + ".png"), f.Png);
            }
            var document = ReportDocument.Build(reduction, figures, inputs, commandLine, now, toolVersion);
            File.WriteAllText(Path.Combine(temporary, "report.md"), MarkdownRenderer.Render(document));
            File.WriteAllText(Path.Combine(temporary, "report.html"), HtmlRenderer.Render(ReportDocument.Title(reduction), document));
            if (Directory.Exists(target)) Directory.Delete(target, recursive: true);
            Directory.Move(temporary, target);
        }
        catch
        {
            if (Directory.Exists(temporary)) Directory.Delete(temporary, recursive: true);
            throw;
        }
    }

    private static string N(double v) => CsvTable.Number(v);

    private static string ValueColumn(NightReduction r) => r.Frequency ? "force_gradient_N_per_m" : "force_N";

    private static void WriteParabolas(string path, NightReduction r)
    {
        string curvature = r.Frequency ? "curvature_N_per_m_per_V2" : "curvature_N_per_V2";
        string vertex = r.Frequency ? "vertex_N_per_m" : "vertex_N";
        string[] header = ["run", "position", "piezo_m", "separation_m", "v0_V", "sigma_v0_V", curvature, "sigma_" + curvature, vertex, "sigma_" + vertex, "chi2", "dof", "steps"];
        var rows = r.Runs.SelectMany(run => run.Positions.Select(p => (IReadOnlyList<string>)
        [
            run.Run, p.Index.ToString(CultureInfo.InvariantCulture), N(p.Piezo), N(p.Separation), N(p.ResidualPotential), N(p.ResidualPotentialSigma),
            N(p.Curvature), N(p.CurvatureSigma), N(p.Vertex), N(p.VertexSigma), N(p.ChiSquare), p.DegreesOfFreedom.ToString(CultureInfo.InvariantCulture),
            p.Steps.ToString(CultureInfo.InvariantCulture),
        ]));
        CsvTable.Write(path, header, rows);
    }

    // P = −F'/(2 pi R) (physics.md, PFA); in deflection mode the force gives E = F/(2 pi R) instead, so the column is empty.
    private static string Pressure(NightReduction r, double value) =>
        r.Frequency ? N(-value / (2 * Math.PI * r.Night.Runs[0].Theory.Sphere.Radius.Value)) : "";

    private static void WriteReduced(string path, NightReduction r)
    {
        // The night on its common grid (run-files.md columns first, then the combination's own columns).
        CombinedNight c = r.Combined;
        string[] header = ["separation_m", ValueColumn(r), "sigma_random", "sigma_systematic", "equivalent_pressure_Pa", "runs", "birge_ratio", "ci95_half_width"];
        double[] random = c.RandomSigma, systematic = c.SystematicSigma;
        var rows = Enumerable.Range(0, c.Value.Length).Select(j => (IReadOnlyList<string>)
        [
            N(c.Separation[j]), N(c.Value[j]), N(random[j]), N(systematic[j]), Pressure(r, c.Value[j]),
            c.RunsAtPoint[j].ToString(CultureInfo.InvariantCulture), N(c.BirgeRatio[j]), N(c.HalfWidth95[j]),
        ]);
        CsvTable.Write(path, header, rows);
    }

    private static void WriteRunPoints(string path, NightReduction r)
    {
        string[] header = ["run", "separation_m", ValueColumn(r), "sigma_random", "sigma_systematic", "equivalent_pressure_Pa", "time_s", "amplitude_correction"];
        var rows = new List<IReadOnlyList<string>>();
        foreach (RunResult run in r.Runs)
        {
            double[] random = run.RandomSigma, systematic = run.SystematicSigma;
            for (int j = 0; j < run.Value.Length; j++)
                rows.Add([run.Run, N(run.Separation[j]), N(run.Value[j]), N(random[j]), N(systematic[j]), Pressure(r, run.Value[j]), N(run.PointTime[j]), N(run.AmplitudeCorrection[j])]);
        }
        CsvTable.Write(path, header, rows);
    }

    private static void WriteTheory(string path, NightReduction r)
    {
        string[] header = ["theory", "separation_m", "value", "band_low", "band_high", "linear_sigma", "monte_carlo_sigma", "quantity"];
        string quantity = r.Frequency ? "force_gradient_N_per_m" : "force_N";
        var rows = r.Comparison.SelectMany(t => Enumerable.Range(0, t.Value.Length).Select(j => (IReadOnlyList<string>)
        [
            t.Theory, N(r.Combined.Separation[j]), N(t.Value[j]), N(t.BandLow[j]), N(t.BandHigh[j]), N(t.LinearSigma[j]), N(t.MonteCarloSigma[j]), quantity,
        ]));
        CsvTable.Write(path, header, rows);
    }

    private static void WriteBudget(string path, NightReduction r)
    {
        // The night's error budget per separation: the statistical part, every systematic source, their total.
        string[] header = ["source", "separation_m", "contribution"];
        CombinedNight c = r.Combined;
        var rows = new List<IReadOnlyList<string>>();
        void Add(string source, double[] sigma)
        {
            for (int j = 0; j < sigma.Length; j++) rows.Add([source, N(c.Separation[j]), N(sigma[j])]);
        }
        Add("statistical", c.RandomSigma);
        foreach ((string source, double[] sigma) in c.Budget()) Add(source, sigma);
        Add("systematic total", c.SystematicSigma);
        Add("total", c.RandomSigma.Zip(c.SystematicSigma, (x, y) => Math.Sqrt(x * x + y * y)).ToArray());
        CsvTable.Write(path, header, rows);
    }

    private static void WriteCalibrationBudget(string path, NightReduction r)
    {
        // Per run: what moves z0, k and m — the fit's own uncertainty, each systematic source's signed change for +1 sigma
        // of its input (step: that sigma, SI), and the total; m empty in frequency mode.
        string[] header = ["run", "source", "step", "gap_offset_m", "spring_constant_N_per_m", "deflection_sensitivity_m_per_unit"];
        var rows = r.Runs.SelectMany(run => run.CalibrationBudget().Select(b => (IReadOnlyList<string>)
            [run.Run, b.Source, N(b.Step), N(b.GapOffset), N(b.SpringConstant), r.Frequency ? "" : N(b.Sensitivity)]));
        CsvTable.Write(path, header, rows);
    }

    private static JsonObject Pair(Estimate e) => new() { ["value"] = e.Value, ["sigma"] = e.Sigma, ["sigma_statistical"] = e.StatisticalSigma };

    private static JsonObject Pair(double value, double sigma) => new() { ["value"] = value, ["sigma"] = sigma };

    private static string Summary(NightReduction r)
    {
        var runs = new JsonArray();
        foreach (RunResult run in r.Runs)
        {
            var v0 = NightPipeline.ResidualPotential(run);
            var o = new JsonObject
            {
                ["name"] = run.Run,
                ["z0_m"] = Pair(run.Calibration.GapOffset),
                ["v0_V"] = Pair(v0.V0, v0.V0Sigma),
                ["v0_reference_separation_m"] = v0.Separation,
                ["v0_slope_V_per_m"] = Pair(v0.Slope, v0.SlopeSigma),
                ["spring_constant_N_per_m"] = Pair(run.Calibration.SpringConstant),
            };
            if (run.Calibration.Sensitivity is { } m) o["deflection_sensitivity_m_per_unit"] = Pair(m);
            if (run.Calibration.PiezoScale is { } s) o["piezo_scale"] = Pair(s);
            if (run.Calibration.GapDrift is { } g) o["gap_drift_m_per_s"] = Pair(g);
            if (run.Calibration.ResidualPotentialDrift is { } w) o["v0_drift_V_per_s"] = Pair(w);
            if (run.Calibration.SignalLag is { } lag) o["signal_lag_s"] = Pair(lag);
            o["z0_reference_time_s"] = run.Calibration.ReferenceTime;
            o["calibration_chi2"] = run.Calibration.ChiSquare;
            o["calibration_dof"] = run.Calibration.DegreesOfFreedom;
            o["calibration_p_value"] = run.Calibration.PValue;
            o["calibration_stop"] = run.Calibration.Stop.ToString();
            o["fitted"] = new JsonArray(run.Calibration.Fitted.Select(f => (JsonNode)f).ToArray());
            o["warnings"] = new JsonArray(run.Warnings.Select(w => (JsonNode)w).ToArray());
            runs.Add(o);
        }
        var summary = new JsonObject
        {
            ["mode"] = r.Frequency ? "frequency-shift" : "deflection",
            ["trusted"] = r.TrustProblems.Count == 0,
            ["trust_problems"] = new JsonArray(r.TrustProblems.Select(t => (JsonNode)t).ToArray()),
            ["runs"] = runs,
            ["night"] = Night(r),
            ["comparison"] = new JsonArray(r.Comparison.Select(t => (JsonNode)Comparison(t)).ToArray()),
        };
        return summary.ToJsonString(new JsonSerializerOptions { WriteIndented = true, NumberHandling = System.Text.Json.Serialization.JsonNumberHandling.AllowNamedFloatingPointLiterals }) + "\n";
    }

    private static JsonObject Night(NightReduction r) => new()
    {
        ["points"] = r.Combined.Value.Length,
        ["separation_min_m"] = r.Combined.Separation.Min(),
        ["separation_max_m"] = r.Combined.Separation.Max(),
        ["birge_ratio"] = r.Combined.OverallBirgeRatio,
        ["flagged_runs"] = new JsonArray(r.Flags.Select(f => (JsonNode)f).ToArray()),
        ["run_consistency"] = new JsonArray(r.Combined.Consistency.Select(c => (JsonNode)new JsonObject
        {
            ["run"] = c.Run, ["points"] = c.Points, ["chi2"] = c.ChiSquare, ["p_value"] = c.PValue, ["flagged"] = c.Flagged,
        }).ToArray()),
    };

    private static JsonObject Comparison(TheoryResult t)
    {
        var o = new JsonObject
        {
            ["theory"] = t.Theory,
            ["chi2"] = t.ChiSquare,
            ["dof"] = t.DegreesOfFreedom,
            ["p_value"] = t.PValue,
            ["chi2_random_only"] = t.RandomChiSquare,
            ["p_value_random_only"] = t.RandomPValue,
            ["excluded_95"] = t.Excluded95,
            ["excluded_99_7"] = t.Excluded997,
            ["verdict"] = t.Verdict,
            ["band_disagreement_separations_m"] = new JsonArray(t.BandDisagreement.Select(x => (JsonNode)x).ToArray()),
        };
        if (t.BeyondPfa is { } theta) o["beyond_pfa_theta"] = new JsonObject { ["value"] = theta.Value, ["sigma"] = theta.Sigma, ["chi2"] = theta.ChiSquare };
        if (t.GapShift is { } g) o["casimir_gap_shift_m"] = new JsonObject { ["value"] = g.Value, ["sigma"] = g.Sigma, ["pull"] = t.GapShiftPull, ["chi2"] = g.ChiSquare };
        return o;
    }

    /// <summary>Every input file of the night (run files, night.toml, data) with its size and SHA-256, in path order; opened read-only.</summary>
    public static IReadOnlyList<InputFile> Inputs(NightReduction r)
    {
        var files = new SortedSet<string>(StringComparer.Ordinal);
        foreach (RunSettings run in r.Night.Runs)
        {
            files.Add(run.RunFile);
            if (run.NightFile is not null) files.Add(run.NightFile);
            files.Add(run.DataFile);
        }
        return files.Select(f =>
        {
            using FileStream stream = new(f, FileMode.Open, FileAccess.Read, FileShare.Read);
            return new InputFile(f, stream.Length, Convert.ToHexStringLower(SHA256.HashData(stream)));
        }).ToArray();
    }

    private static string Provenance(NightReduction r, IReadOnlyList<InputFile> files, string commandLine, DateTimeOffset now, string toolVersion)
    {
        var inputs = new JsonArray(files.Select(f => (JsonNode)new JsonObject { ["path"] = f.Path, ["bytes"] = f.Bytes, ["sha256"] = f.Sha256 }).ToArray());
        var o = new JsonObject
        {
            ["tool"] = "forcefit",
            ["version"] = toolVersion,
            ["command_line"] = commandLine,
            ["created_utc"] = now.UtcDateTime.ToString("yyyy-MM-ddTHH:mm:ssZ", CultureInfo.InvariantCulture),
            ["runtime"] = System.Runtime.InteropServices.RuntimeInformation.FrameworkDescription,
            ["night_folder"] = r.Night.Folder,
            ["inputs"] = inputs,
            ["settings"] = JsonSerializer.SerializeToNode(r.Night.Runs.Select(Describe).ToArray()),
            ["comparison_draws"] = r.Options.Draws,
            ["comparison_seed"] = r.Options.Seed,
        };
        return o.ToJsonString(new JsonSerializerOptions { WriteIndented = true }) + "\n";
    }

    /// <summary>The resolved settings of a run as text, for provenance and the report.</summary>
    public static Dictionary<string, string> Describe(RunSettings s) => new()
    {
        ["run"] = s.Name,
        ["mode"] = s.Instrument.Mode.ToString(),
        ["protocol"] = s.Protocol.ToString(),
        ["spring_constant"] = s.Instrument.SpringConstant?.ToString() ?? "auto",
        ["free_signal"] = (s.Instrument.Mode == InstrumentMode.FrequencyShift ? s.Instrument.FreeFrequency : s.Instrument.DeflectionFree)?.ToString() ?? "auto",
        ["amplitude"] = s.Instrument.Amplitude.ToString(),
        ["radius"] = s.Theory.Sphere.Radius.ToString(),
        ["piezo_scale"] = s.Piezo.Scale.ToString(),
        ["piezo_direction"] = s.Piezo.Direction.ToString(),
        ["settle"] = s.Settle?.ToString() ?? "",
        ["reference_beyond"] = s.Instrument.ReferenceBeyond?.ToString() ?? "",
    };
}
