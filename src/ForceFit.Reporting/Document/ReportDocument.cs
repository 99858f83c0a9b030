using System.Globalization;
using ForceFit.Analysis.Comparison;
using ForceFit.Analysis.Reduction;
using ForceFit.Ingest.RunFiles;
using ForceFit.Reporting.Figures;

namespace ForceFit.Reporting.Document;

/// <summary>
/// The content of the report, in order: title and what was reduced; trust problems and warnings first; the headline
/// results; figures; tables (calibration per run, the night, the comparison, the budget); the settings and the
/// provenance; the assumptions. All text is plain; the renderers escape it.
/// </summary>
public static class ReportDocument
{
    /// <summary>The report's title.</summary>
    public static string Title(NightReduction r)
    {
        string title = r.Night.Runs[0].Theory.Title;
        return "ForceFit reduction: " + (title.Length > 0 ? title : Path.GetFileName(r.Night.Folder.TrimEnd(Path.DirectorySeparatorChar)));
    }

    private static string I(FormattableString s) => FormattableString.Invariant(s);

    /// <summary>Builds the blocks of the report.</summary>
    public static IReadOnlyList<Block> Build(NightReduction r, IReadOnlyList<Figure> figures, IReadOnlyList<InputFile> inputs, string commandLine, DateTimeOffset now, string toolVersion)
    {
        var b = new List<Block> { new Heading(1, Title(r)) };
        RunSettings first = r.Night.Runs[0];
        b.Add(new Paragraph(I($"Reduced {now.UtcDateTime:yyyy-MM-dd HH:mm} UTC by forcefit {toolVersion}: {r.Runs.Count} run(s) of the night folder {r.Night.Folder}, {(r.Frequency ? "frequency-shift" : "deflection")} mode, {(first.Protocol == Protocol.VoltageSteps ? "voltage steps" : "distance ramps")}, {r.Segments.Sum(s => s.Samples):N0} samples in {r.Segments.Sum(s => s.Segments.Count):N0} steps.")));

        if (r.TrustProblems.Count > 0)
        {
            b.Add(new Heading(2, "Cannot be trusted"));
            b.Add(new Bullets(r.TrustProblems, Alert: true));
        }
        var warnings = r.Flags.Concat(r.Runs.SelectMany(x => x.Warnings)).Concat(r.Segments.SelectMany(s => s.Warnings)).ToArray();
        if (warnings.Length > 0)
        {
            b.Add(new Heading(2, "Warnings"));
            b.Add(new Bullets(warnings, Alert: true));
        }

        b.Add(new Heading(2, "Headline results"));
        b.Add(new Bullets(r.Runs.Select(run =>
        {
            var v0 = NightPipeline.ResidualPotential(run);
            RunCalibration c = run.Calibration;
            return I($"{run.Run}: z0 = {c.GapOffset.Value * 1e9:F2} ± {c.GapOffset.Sigma * 1e9:F2} nm, k = {c.SpringConstant.Value:G5} ± {c.SpringConstant.Sigma:G2} N/m, V0 = {v0.V0 * 1e3:F3} ± {v0.V0Sigma * 1e3:G2} mV at {v0.Separation * 1e9:F0} nm");
        }).Concat(r.Comparison.Select(t => I($"{t.Theory}: chi2 = {t.ChiSquare:F1} for {t.DegreesOfFreedom} degrees of freedom, p = {t.PValue:G3}: {t.Verdict}"))).ToArray()));
        if (r.Comparison.Count > 0)
            b.Add(new Paragraph("These verdicts rest on the assumptions listed at the end of this report (PFA with the stated beyond-PFA coefficient, the stated materials, roughness and temperature, Gaussian uncertainties). A disagreement with a theory is not by itself evidence of new physics or grounds to exclude it: conclusions need independent review."));

        b.Add(new Heading(2, "Figures"));
        foreach (Figure f in figures) b.Add(new FigureBlock(f));

        b.Add(new Heading(2, "Calibration per run"));
        string[] calibrationHeader = ["run", "z0 (nm)", "k (N/m)", "m (nm per unit)", "V0 nearest (mV)", "dV0/da (mV/µm)", "gap drift (pm/s)", "chi2 / dof", "p"];
        var calibrationRows = r.Runs.Select(run =>
        {
            var v0 = NightPipeline.ResidualPotential(run);
            RunCalibration c = run.Calibration;
            return new[]
            {
                run.Run, I($"{c.GapOffset.Value * 1e9:F3} ± {c.GapOffset.Sigma * 1e9:F3}"), I($"{c.SpringConstant.Value:G6} ± {c.SpringConstant.Sigma:G2}"),
                c.Sensitivity is { } m ? I($"{m.Value * 1e9:G5} ± {m.Sigma * 1e9:G2}") : "",
                I($"{v0.V0 * 1e3:F3} ± {v0.V0Sigma * 1e3:G2}"), I($"{v0.Slope * 1e-3:F3} ± {v0.SlopeSigma * 1e-3:F3}"),
                c.GapDrift is { } g ? I($"{g.Value * 1e12:F2} ± {g.Sigma * 1e12:F2}") : "",
                I($"{c.ChiSquare:F1} / {c.DegreesOfFreedom}"), I($"{c.PValue:G3}"),
            };
        }).ToArray();
        // The deflection sensitivity column only in deflection mode.
        int[] keep = Enumerable.Range(0, calibrationHeader.Length).Where(i => i != 3 || !r.Frequency).ToArray();
        b.Add(new Table(keep.Select(i => calibrationHeader[i]).ToArray(), calibrationRows.Select(row => (IReadOnlyList<string>)keep.Select(i => row[i]).ToArray()).ToArray()));
        b.Add(new Paragraph("z0 is quoted at the mean time of each run's steps; the gap drift and the drift of V0 with time are fitted with it. The piezo scale is held at its stated value and its uncertainty is carried as a systematic error shared by all runs."));
        b.Add(new Paragraph("What moves each run's calibration: the fit's own uncertainty, the signed change of z0, k (and m) when each systematic input is raised by its stated sigma (the whole reduction redone), and their quadrature total (every line in tables/calibration-budget.csv)."));
        string[] shiftHeader = ["run", "source", "varied by", "z0 (pm)", "k (%)", "m (%)"];
        var shiftRows = r.Runs.SelectMany(run => run.CalibrationBudget().Select(x => new[]
        {
            run.Run, x.Source, StepText(x.Source, x.Step), Shift(x, x.GapOffset * 1e12, "0.0"),
            Shift(x, x.SpringConstant / run.Calibration.SpringConstant.Value * 100, "0.000"),
            run.Calibration.Sensitivity is { } m ? Shift(x, x.Sensitivity / m.Value * 100, "0.000") : "",
        })).ToArray();
        int[] shiftKeep = Enumerable.Range(0, shiftHeader.Length).Where(i => i != 5 || !r.Frequency).ToArray();
        b.Add(new Table(shiftKeep.Select(i => shiftHeader[i]).ToArray(), shiftRows.Select(row => (IReadOnlyList<string>)shiftKeep.Select(i => row[i]).ToArray()).ToArray()));

        CombinedNight night = r.Combined;
        b.Add(new Heading(2, "The reduced night"));
        b.Add(new Paragraph(I($"{night.Value.Length} points from {night.Separation.Min() * 1e9:F1} to {night.Separation.Max() * 1e9:F1} nm, combined from {r.Runs.Count} run(s)") +
            (double.IsNaN(night.OverallBirgeRatio) ? "." : I($"; Birge ratio of the runs' scatter {night.OverallBirgeRatio:F2}."))));
        if (night.Consistency.Count > 0)
            b.Add(new Bullets(night.Consistency.Select(c => I($"{c.Run} against the others: chi2 = {c.ChiSquare:F1} for {c.Points} points, p = {c.PValue:G3}") + (c.Flagged ? " — flagged, kept in the mean" : "")).ToArray()));
        string unit = r.Frequency ? "F' (N/m)" : "F (N)";
        double[] random = night.RandomSigma, systematic = night.SystematicSigma;
        b.Add(new Table(["a (nm)", unit, "σ random", "σ systematic", "runs", "Birge ratio"],
            Enumerable.Range(0, night.Value.Length).Select(j => (IReadOnlyList<string>)
            [
                I($"{night.Separation[j] * 1e9:F1}"), I($"{night.Value[j]:G6}"), I($"{random[j]:G3}"), I($"{systematic[j]:G3}"),
                night.RunsAtPoint[j].ToString(CultureInfo.InvariantCulture), double.IsNaN(night.BirgeRatio[j]) ? "" : I($"{night.BirgeRatio[j]:F2}"),
            ]).ToArray()));

        if (r.Comparison.Count > 0)
        {
            b.Add(new Heading(2, "Comparison with theory"));
            b.Add(new Table(["theory", "chi2 / dof", "p-value", "random-only chi2", "excluded at 95%", "excluded at 99.7%", "fitted beyond-PFA theta", "Casimir gap shift (nm)"],
                r.Comparison.Select(t => (IReadOnlyList<string>)
                [
                    t.Theory, I($"{t.ChiSquare:F1} / {t.DegreesOfFreedom}"), I($"{t.PValue:G3}"), I($"{t.RandomChiSquare:G4}"),
                    t.Excluded95 ? "yes" : "no", t.Excluded997 ? "yes" : "no",
                    t.BeyondPfa is { } th ? I($"{th.Value:F2} ± {th.Sigma:F2}") : "",
                    t.GapShift is { } g ? I($"{g.Value * 1e9:F2} ± {g.Sigma * 1e9:F2} (pull {t.GapShiftPull:F1})") : "",
                ]).ToArray()));
            b.Add(new Paragraph(I($"Bands: {r.Options.Draws} Monte Carlo draws (seed {r.Options.Seed}) of every stated uncertainty of the theory inputs and of the night's systematic errors, 95% central interval; the chi-square uses the linearised covariance (random part with its correlations, systematic part correlated between points). The gap shift is the common change of every separation that the Casimir data prefer with that theory; its pull compares it with the electrostatic z0.")));
            var disagreements = r.Comparison.Where(t => t.BandDisagreement.Length > 0)
                .Select(t => I($"{t.Theory}: the linearised and Monte Carlo bands differ by more than 10% of the band at {t.BandDisagreement.Length} separation(s), from {t.BandDisagreement.Min() * 1e9:F1} nm; the Monte Carlo band is the one shown.")).ToArray();
            b.Add(disagreements.Length > 0 ? new Bullets(disagreements, Alert: true) : new Paragraph("The linearised and Monte Carlo bands agree to 10% of the band at every separation."));
        }

        b.Add(new Heading(2, "Error budget"));
        var budget = night.Budget().Where(x => x.Sigma.Any(v => v != 0)).ToArray();
        int[] shown = Representative(night.Value.Length, 8);
        b.Add(new Table(["source", .. shown.Select(j => I($"{night.Separation[j] * 1e9:F0} nm"))],
            new[] { ("statistical", random) }.Concat(budget).Append(("systematic total", systematic))
                .Select(row => (IReadOnlyList<string>)[row.Item1, .. shown.Select(j => I($"{row.Item2[j] / Math.Abs(night.Value[j]) * 100:G2}%"))]).ToArray()));
        b.Add(new Paragraph("Relative standard uncertainties at representative separations; every separation is in tables/budget.csv."));

        b.Add(new Heading(2, "Settings"));
        var settings = r.Night.Runs.Select(ReportFolder.Describe).ToArray();
        string[] keys = settings[0].Keys.ToArray();
        b.Add(new Table(keys, settings.Select(d => (IReadOnlyList<string>)keys.Select(k => d[k]).ToArray()).ToArray()));
        b.Add(new Heading(2, "Provenance"));
        b.Add(new Paragraph(I($"Command line: {commandLine}. Tool version {toolVersion} on {System.Runtime.InteropServices.RuntimeInformation.FrameworkDescription}. Monte Carlo seed {r.Options.Seed}.")));
        b.Add(new Table(["input", "bytes", "SHA-256"], inputs.Select(f => (IReadOnlyList<string>)[f.Path, f.Bytes.ToString(CultureInfo.InvariantCulture), f.Sha256]).ToArray()));

        b.Add(new Heading(2, "Assumptions"));
        b.Add(new Bullets(
        [
            "Reference steps feel the Casimir force of the settings' theories (their mean; its uncertainty is half their spread, or 20% with a single theory, our choice) and a residual electrostatic force with V0 extrapolated along its fitted gap trend; both are corrected.",
            "The oscillation-amplitude correction (A^2/8) F''' and the small gap changes within a position use the smooth curve of the data themselves, not a theory.",
            "Runs are combined on a common grid by interpolation in ln a of the ratio to a smooth fit of the whole night; a run never contributes outside its own range. A run is flagged when its chi-square against the others has p < 0.001 (our threshold); flagged runs stay in the mean.",
            "The comparison assumes the PFA with the stated first-order beyond-PFA coefficient, second-order roughness (or geometrical averaging of measured height histograms), the stated materials and temperature, and Gaussian uncertainties. A disagreement is a statement about this model of the experiment, not by itself evidence of new physics or the exclusion of a theory: conclusions need independent review.",
        ]));
        b.Add(new Paragraph("Files: tables/steps.csv, tables/parabolas.csv, tables/reduced.csv (the night), tables/run-points.csv (each run), tables/theory.csv, tables/budget.csv; numbers in summary.json; inputs and their SHA-256 in provenance.json; figures as SVG and PNG in figures/."));
        return b;
    }

    // A source's signed change, or ± for the statistical and total standard uncertainties.
    private static string Shift(CalibrationShift x, double value, string digits)
    {
        string magnitude = Math.Abs(value).ToString(digits, CultureInfo.InvariantCulture);
        return double.IsNaN(x.Step) ? "±" + magnitude : (value < 0 ? "−" : "+") + magnitude;
    }

    // A systematic input's step in the unit it is stated in (SI inside; RunReducer names the sources).
    private static string StepText(string source, double step) => double.IsNaN(step) ? "" : source switch
    {
        "piezo scale" => I($"±{step:G3}"),
        "radius" => I($"±{step * 1e6:G3} µm"),
        "amplitude" => I($"±{step * 1e9:G3} nm"),
        "reference-gap Casimir force" => I($"±{step * 100:G3}%"),
        "V0 at the reference gap" => I($"±{step * 1e3:G3} mV"),
        "signal filter step" => I($"±{step * 1e3:G3} ms"),
        "spring constant (given)" => I($"±{step:G3} N/m"),
        "deflection sensitivity (given)" => I($"±{step * 1e9:G3} nm per unit"),
        _ => I($"±{step:G3} (SI)"),
    };

    // Up to n indices spread evenly over 0..count−1 (always the first and the last).
    private static int[] Representative(int count, int n) => count <= n
        ? Enumerable.Range(0, count).ToArray()
        : Enumerable.Range(0, n).Select(i => (int)Math.Round(i * (count - 1) / (double)(n - 1))).Distinct().ToArray();
}
