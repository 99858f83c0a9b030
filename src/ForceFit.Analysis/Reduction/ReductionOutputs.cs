using System.Globalization;
using System.Security.Cryptography;
using System.Text;
using System.Text.Json;
using System.Text.Json.Nodes;
using ForceFit.Analysis.Tables;
using ForceFit.Core.Problems;
using ForceFit.Fitting;
using ForceFit.Ingest.RunFiles;
using ForceFit.Ingest.Steps;

namespace ForceFit.Analysis.Reduction;

/// <summary>A reduced night: every run's steps and result.</summary>
/// <param name="Night">The settings.</param>
/// <param name="Segments">Each run's steps.</param>
/// <param name="Runs">Each run's reduction.</param>
public sealed record NightReduction(NightSettings Night, IReadOnlyList<RunSegments> Segments, IReadOnlyList<RunResult> Runs)
{
    /// <summary>Frequency-shift or deflection (one mode per night).</summary>
    public bool Frequency => Night.Runs[0].Instrument.Mode == InstrumentMode.FrequencyShift;

    /// <summary>Reasons the result cannot be trusted (exit status 3), empty when it can.</summary>
    public IReadOnlyList<string> TrustProblems => Runs
        .Where(r => !r.Calibration.Converged)
        .Select(r => $"{r.Run}: the calibration fit did not converge ({r.Calibration.Stop})")
        .Concat(Runs.Where(r => r.Calibration.DegreesOfFreedom > 0 && r.Calibration.PValue < 1e-6)
            .Select(r => $"{r.Run}: the calibration fit is inconsistent with the uncertainties (chi2 = {r.Calibration.ChiSquare.ToString("F1", CultureInfo.InvariantCulture)} for {r.Calibration.DegreesOfFreedom}, p = {r.Calibration.PValue.ToString("G2", CultureInfo.InvariantCulture)})"))
        .ToArray();
}

/// <summary>
/// Writes a reduction's report folder (run-files.md, Outputs): summary.json, provenance.json, tables/steps.csv,
/// tables/parabolas.csv, tables/reduced.csv, tables/budget.csv and a plain report.md. Everything is written into a
/// temporary folder beside the target and moved into place at the end, so a failure never leaves half a report.
/// </summary>
public static class ReductionOutputs
{
    /// <summary>Reads, reduces and returns a night (no files written).</summary>
    public static NightReduction Reduce(NightSettings night, CancellationToken cancel = default)
    {
        if (night.Runs.Select(r => r.Instrument.Mode).Distinct().Count() > 1)
            throw new InputException(new Problem(night.Folder, null, "the night mixes frequency-shift and deflection runs; reduce them separately"));
        var segments = night.Runs.Select(r => RunSteps.Read(r, cancel: cancel)).ToArray();
        var results = new RunResult[segments.Length];
        Parallel.For(0, segments.Length, new ParallelOptions { CancellationToken = cancel }, i => results[i] = RunReducer.Reduce(segments[i]));
        return new NightReduction(night, segments, results);
    }

    /// <summary>Writes the report folder atomically; an existing folder is replaced only with <paramref name="force"/>.</summary>
    public static void Write(NightReduction reduction, string outFolder, bool force, string commandLine, DateTimeOffset now, string toolVersion)
    {
        string target = Path.GetFullPath(outFolder).TrimEnd(Path.DirectorySeparatorChar);
        if (File.Exists(target)) throw new InputException(new Problem(target, null, "the output folder is a file"));
        if (Directory.Exists(target) && !force) throw new InputException(new Problem(target, null, "the output folder exists; add --force to replace it"));
        string nightFolder = Path.GetFullPath(reduction.Night.Folder).TrimEnd(Path.DirectorySeparatorChar);
        if ((target + Path.DirectorySeparatorChar).StartsWith(nightFolder + Path.DirectorySeparatorChar, StringComparison.Ordinal))
            throw new InputException(new Problem(target, null, "the output folder lies inside the night folder; choose a folder outside the raw data"));
        string parent = Path.GetDirectoryName(target)!;
        Directory.CreateDirectory(parent);
        string temporary = Path.Combine(parent, "." + Path.GetFileName(target) + ".partial-" + Guid.NewGuid().ToString("N")[..8]);
        try
        {
            Directory.CreateDirectory(Path.Combine(temporary, "tables"));
            StepsTable.Write(Path.Combine(temporary, "tables", "steps.csv"), reduction.Segments);
            WriteParabolas(Path.Combine(temporary, "tables", "parabolas.csv"), reduction);
            WriteReduced(Path.Combine(temporary, "tables", "reduced.csv"), reduction);
            WriteBudget(Path.Combine(temporary, "tables", "budget.csv"), reduction);
            File.WriteAllText(Path.Combine(temporary, "summary.json"), Summary(reduction));
            File.WriteAllText(Path.Combine(temporary, "provenance.json"), Provenance(reduction, commandLine, now, toolVersion));
            File.WriteAllText(Path.Combine(temporary, "report.md"), ReportMarkdown(reduction));
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

    private static void WriteReduced(string path, NightReduction r)
    {
        // One row per run and position (the combination of runs onto a common grid is not part of this version);
        // the run column comes first so that the documented columns keep their names.
        string[] header = ["run", "separation_m", ValueColumn(r), "sigma_random", "sigma_systematic", "equivalent_pressure_Pa"];
        var rows = new List<IReadOnlyList<string>>();
        foreach ((RunResult run, RunSettings settings) in r.Runs.Zip(r.Night.Runs))
        {
            double[] random = run.RandomSigma, systematic = run.SystematicSigma;
            double radius = settings.Theory.Sphere.Radius.Value;
            for (int j = 0; j < run.Value.Length; j++)
            {
                // P = −F'/(2 pi R) (physics.md, PFA); in deflection mode the force gives E = F/(2 pi R) instead, so the column is empty.
                string pressure = r.Frequency ? N(-run.Value[j] / (2 * Math.PI * radius)) : "";
                rows.Add([run.Run, N(run.Separation[j]), N(run.Value[j]), N(random[j]), N(systematic[j]), pressure]);
            }
        }
        CsvTable.Write(path, header, rows);
    }

    private static void WriteBudget(string path, NightReduction r)
    {
        string[] header = ["run", "source", "separation_m", "contribution"];
        var rows = new List<IReadOnlyList<string>>();
        foreach (RunResult run in r.Runs)
        {
            double[] random = run.RandomSigma;
            for (int j = 0; j < run.Value.Length; j++) rows.Add([run.Run, "statistical", N(run.Separation[j]), N(random[j])]);
            foreach (SystematicSource s in run.Systematics)
            {
                double[] sigma = s.PointSigma();
                for (int j = 0; j < run.Value.Length; j++) rows.Add([run.Run, s.Name, N(run.Separation[j]), N(sigma[j])]);
            }
        }
        CsvTable.Write(path, header, rows);
    }

    private static JsonObject Pair(Estimate e) => new() { ["value"] = e.Value, ["sigma"] = e.Sigma, ["sigma_statistical"] = e.StatisticalSigma };

    private static JsonObject Pair(double value, double sigma) => new() { ["value"] = value, ["sigma"] = sigma };

    /// <summary>V0 at the run's nearest position, and the weighted straight-line slope of V0 against separation.</summary>
    public static (double V0, double V0Sigma, double Slope, double SlopeSigma, double Separation) ResidualPotential(RunResult run)
    {
        (FitResult line, double nearest) = RunReducer.ResidualPotentialLine(run.Positions);
        return (line.Parameters[0], Math.Sqrt(line.Covariance[0, 0]), line.Parameters[1], Math.Sqrt(line.Covariance[1, 1]), nearest);
    }

    private static string Summary(NightReduction r)
    {
        var runs = new JsonArray();
        foreach (RunResult run in r.Runs)
        {
            var v0 = ResidualPotential(run);
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
            ["comparison"] = new JsonArray(),
        };
        return summary.ToJsonString(new JsonSerializerOptions { WriteIndented = true, NumberHandling = System.Text.Json.Serialization.JsonNumberHandling.AllowNamedFloatingPointLiterals }) + "\n";
    }

    private static string Provenance(NightReduction r, string commandLine, DateTimeOffset now, string toolVersion)
    {
        var files = new SortedSet<string>(StringComparer.Ordinal);
        foreach (RunSettings run in r.Night.Runs)
        {
            files.Add(run.RunFile);
            if (run.NightFile is not null) files.Add(run.NightFile);
            files.Add(run.DataFile);
        }
        var inputs = new JsonArray();
        foreach (string f in files)
        {
            using FileStream stream = new(f, FileMode.Open, FileAccess.Read, FileShare.Read);
            inputs.Add(new JsonObject { ["path"] = f, ["bytes"] = stream.Length, ["sha256"] = Convert.ToHexStringLower(SHA256.HashData(stream)) });
        }
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
        };
        return o.ToJsonString(new JsonSerializerOptions { WriteIndented = true }) + "\n";
    }

    private static Dictionary<string, string> Describe(RunSettings s) => new()
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

    private static string ReportMarkdown(NightReduction r)
    {
        var w = new StringBuilder();
        string title = r.Night.Runs[0].Theory.Title;
        w.Append("# ForceFit reduction: ").Append(Escape(title.Length > 0 ? title : Path.GetFileName(r.Night.Folder))).Append("\n\n");
        if (r.TrustProblems.Count > 0)
        {
            w.Append("## Cannot be trusted\n\n");
            foreach (string t in r.TrustProblems) w.Append("- ").Append(Escape(t)).Append('\n');
            w.Append('\n');
        }
        var warnings = r.Runs.SelectMany(x => x.Warnings).Concat(r.Segments.SelectMany(s => s.Warnings)).ToArray();
        if (warnings.Length > 0)
        {
            w.Append("## Warnings\n\n");
            foreach (string t in warnings) w.Append("- ").Append(Escape(t)).Append('\n');
            w.Append('\n');
        }
        w.Append("## Calibration per run\n\n");
        w.Append("| run | z0 (nm) | k (N/m) | V0 at nearest position (mV) | dV0/da (mV/um) | s | chi2 / dof |\n| --- | --- | --- | --- | --- | --- | --- |\n");
        foreach (RunResult run in r.Runs)
        {
            var v0 = ResidualPotential(run);
            RunCalibration c = run.Calibration;
            w.Append(CultureInfo.InvariantCulture, $"| {Escape(run.Run)} | {c.GapOffset.Value * 1e9:F3} ± {c.GapOffset.Sigma * 1e9:F3} | {c.SpringConstant.Value:G6} ± {c.SpringConstant.Sigma:G2} | {v0.V0 * 1e3:F4} ± {v0.V0Sigma * 1e3:F4} | {v0.Slope * 1e-3:F3} ± {v0.SlopeSigma * 1e-3:F3} | {c.PiezoScale?.Value:F5} ± {c.PiezoScale?.Sigma:F5} | {c.ChiSquare:F1} / {c.DegreesOfFreedom} |\n");
        }
        w.Append("\nz0 is quoted at the mean time of each run's steps; the gap drift and the drift of V0 with time are fitted with it.\n");
        w.Append("The piezo scale is fitted with the stated value as a prior; when the data do not constrain it, its uncertainty is the stated one.\n\n");
        w.Append("## Assumptions\n\n");
        w.Append("- Reference steps are free of the Casimir force; their residual electrostatic force is corrected with V0 extrapolated along its fitted gap trend.\n");
        w.Append("- The oscillation-amplitude correction (A^2/8) F''' and the small gap changes within a position use the smooth curve of the data themselves, not a theory.\n");
        w.Append("- Comparison with theory is not part of this report version; no conclusion about any model is drawn here.\n\n");
        w.Append("Tables: `tables/steps.csv`, `tables/parabolas.csv`, `tables/reduced.csv`, `tables/budget.csv`; numbers in `summary.json`; inputs and their SHA-256 in `provenance.json`.\n");
        return w.ToString();
    }

    // Markdown-escapes text taken from the user's files.
    private static string Escape(string s)
    {
        var b = new StringBuilder(s.Length);
        foreach (char ch in s)
        {
            if ("\\`*_{}[]<>()#+-.!|".Contains(ch)) b.Append('\\');
            b.Append(ch);
        }
        return b.ToString();
    }
}
