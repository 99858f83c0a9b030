using System.Globalization;
using ForceFit.Analysis.Comparison;
using ForceFit.Analysis.Reduction;
using ForceFit.Ingest.RunFiles;
using ForceFit.Ingest.Steps;
using ForceFit.Theory.Electrostatics;
using ScottPlot;

namespace ForceFit.Reporting.Figures;

/// <summary>
/// The report's figures of a reduced night, each with its axes labelled by quantity and unit: raw channels, the
/// detected steps, bias parabolas, V0 against separation and time, curvatures with the calibration fit and its
/// normalised residuals, the free signal's drift, the result against every theory's band, the residuals against
/// each theory and the error budget.
/// </summary>
public static class NightFigures
{
    /// <summary>Draws every figure (in report order).</summary>
    public static IReadOnlyList<Figure> Draw(NightReduction r)
    {
        var figures = new List<Figure>();
        for (int i = 0; i < r.Segments.Count; i++)
            if (r.Segments[i].Envelope is { } e) figures.Add(Raw(r, i, e));
        if (r.Segments[0].Envelope is { } first) figures.Add(StepsZoom(r, first));
        figures.Add(Parabolas(r));
        figures.Add(ResidualPotentialAgainstSeparation(r));
        figures.Add(ResidualPotentialAgainstTime(r));
        figures.Add(Curvature(r));
        figures.Add(CurvatureResiduals(r));
        figures.Add(FreeSignal(r));
        figures.Add(Result(r));
        if (r.Comparison.Count > 0) figures.Add(TheoryResiduals(r));
        figures.Add(Budget(r));
        return figures;
    }

    private static string Quantity(NightReduction r) => r.Frequency ? "force gradient F' (N/m)" : "force F (N)";

    private static string SignalLabel(NightReduction r) => r.Frequency ? "frequency (Hz)" : "deflection signal";

    private static string F(double v, string format) => v.ToString(format, CultureInfo.InvariantCulture);

    private static Figure Raw(NightReduction r, int run, SignalEnvelope e)
    {
        Plot plot = FigureKit.New("time (s)", SignalLabel(r), $"{r.Runs[run].Run}: raw channels");
        var signal = plot.Add.FillY(e.Time, e.SignalMin, e.SignalMax);
        signal.FillColor = Palette.Data.WithAlpha(0.75);
        signal.LineColor = Palette.Data;
        signal.LegendText = "signal (min–max per time bin)";
        var piezo = plot.Add.FillY(e.Time, e.PiezoMin.Select(p => p * 1e9).ToArray(), e.PiezoMax.Select(p => p * 1e9).ToArray());
        piezo.FillColor = Palette.Of(0).WithAlpha(0.6);
        piezo.LineColor = Palette.Of(0);
        piezo.LegendText = "piezo reading (nm, right axis)";
        piezo.Axes.YAxis = plot.Axes.Right;
        FigureKit.RightLabel(plot, "piezo reading (nm)");
        plot.ShowLegend(Alignment.UpperRight);
        return FigureKit.Render(plot, $"raw-{FileSafe(r.Runs[run].Run)}", $"Raw channels of {r.Runs[run].Run}",
            $"Minimum and maximum of the signal and the piezo reading in each of {e.Time.Length} time bins over the whole run (every sample counted, none drawn singly).");
    }

    private static Figure StepsZoom(NightReduction r, SignalEnvelope e)
    {
        RunSegments segments = r.Segments[0];
        Plot plot = FigureKit.New("time (s)", SignalLabel(r), $"{r.Runs[0].Run}: the first steps");
        var samples = plot.Add.ScatterLine(e.FirstTime, e.FirstSignal, Palette.Data);
        samples.LineWidth = 1;
        samples.LegendText = "samples";
        var bias = plot.Add.ScatterLine(e.FirstTime, e.FirstBias.Select(v => v * 1e3).ToArray(), Palette.Of(1));
        bias.LineWidth = 1;
        bias.LegendText = "bias (mV, right axis)";
        bias.Axes.YAxis = plot.Axes.Right;
        FigureKit.RightLabel(plot, "bias (mV)");
        double end = e.FirstTime.Length > 0 ? e.FirstTime[^1] : 0;
        var shown = segments.Segments.Where(s => s.Start <= end).ToArray();
        for (int i = 0; i < shown.Length; i++)
        {
            SegmentStatistics s = shown[i];
            // The kept part of each step, at its mean, with the settle time before it left out.
            double keptStart = s.End - (s.End - s.Start) * Math.Min(1, s.SamplesKept / Math.Max(1.0, (s.End - s.Start) * SampleRate(e)));
            var mean = plot.Add.ScatterLine(new[] { keptStart, Math.Min(s.End, end) }, new[] { s.Mean, s.Mean }, Palette.Of(0));
            mean.LineWidth = 3;
            if (i == 0) mean.LegendText = "step mean over the kept samples";
            var start = plot.Add.VerticalLine(s.Start, 1, Palette.Of(5), LinePattern.Solid);
            if (i == 0) start.LegendText = "detected step start";
        }
        plot.ShowLegend(Alignment.UpperRight);
        return FigureKit.Render(plot, "steps-zoom", "Detected steps (close-up)",
            $"The first {e.FirstTime.Length} samples of {r.Runs[0].Run} (signal and recorded bias) with the detected step boundaries and each step's mean over the samples kept after the settle time.");
    }

    private static double SampleRate(SignalEnvelope e) =>
        e.FirstTime.Length > 1 ? (e.FirstTime.Length - 1) / Math.Max(1e-12, e.FirstTime[^1] - e.FirstTime[0]) : 1;

    private static Figure Parabolas(NightReduction r)
    {
        RunResult run = r.Runs[0];
        RunSegments segments = r.Segments[0];
        Plot plot = FigureKit.New("bias V (V)", Quantity(r), $"{run.Run}: bias parabolas");
        var positions = run.Positions.OrderBy(p => p.Separation).ToArray();
        var chosen = new[] { positions[0], positions[positions.Length / 2], positions[^1] }.Distinct().ToArray();
        double k = run.Calibration.SpringConstant.Value, m = run.Calibration.Sensitivity?.Value ?? 1;
        // Ramps: the approach and retract bins within one bin width of the window's mean reading.
        bool ramps = segments.Run.Protocol == Protocol.DistanceRamps;
        double threshold = ramps ? segments.Run.BinWidth?.Value ?? 0 : segments.Thresholds.Piezo;
        bool Shown(SegmentKind kind) => ramps ? kind is SegmentKind.Approach or SegmentKind.Retract : kind == SegmentKind.Step;
        for (int c = 0; c < chosen.Length; c++)
        {
            PositionFit p = chosen[c];
            var steps = segments.Segments.Where(s => Shown(s.Kind) && Math.Abs(s.Piezo - p.Piezo) < threshold).ToArray();
            if (steps.Length == 0) continue;
            // Signal to physics (physics.md): F' = k (1 − (f/f0(t))^2), or F = −k m (S − S_free(t)).
            double[] v = steps.Select(s => s.Bias).ToArray();
            double[] y = steps.Select(s => r.Frequency
                ? k * (1 - Math.Pow(s.Mean / run.FreeSignal.At(s.MeanTime), 2))
                : -k * m * (s.Mean - run.FreeSignal.At(s.MeanTime))).ToArray();
            double[] sigma = steps.Select(s => r.Frequency ? 2 * k * s.Mean * s.Sigma / Math.Pow(run.FreeSignal.At(s.MeanTime), 2) : k * m * s.Sigma).ToArray();
            Color colour = Palette.Of(c);
            var points = plot.Add.ScatterPoints(v, y, colour);
            points.MarkerSize = 7;
            points.LegendText = $"a = {F(p.Separation * 1e9, "F0")} nm";
            var bars = plot.Add.ErrorBar(v, y, sigma);
            bars.Color = colour;
            double lo = v.Min(), hi = v.Max();
            double[] curveV = Enumerable.Range(0, 60).Select(i => lo + (hi - lo) * i / 59.0).ToArray();
            var curve = plot.Add.ScatterLine(curveV, curveV.Select(b => p.Vertex + p.Curvature * Math.Pow(b - p.ResidualPotential, 2)).ToArray(), colour);
            curve.LineWidth = 1.5f;
        }
        plot.ShowLegend(Alignment.UpperCenter);
        return FigureKit.Render(plot, "parabolas", "Bias parabolas",
            ramps ? "Approach and retract bins within one bin width of the nearest, a middle and the farthest window of the first run, converted to physical units with the run's calibration, and the fitted parabolas of the windows (vertex at V0)."
                : "Steps at the nearest, a middle and the farthest position of the first run, converted to physical units with the run's calibration, and the fitted parabolas (vertex at V0).");
    }

    // V0 of every position against x (separation in nm or time in h), one colour per run.
    private static Plot ResidualPotentialPlot(NightReduction r, string xLabel, string title, Func<PositionFit, double> x)
    {
        Plot plot = FigureKit.New(xLabel, "residual potential V0 (mV)", title);
        for (int i = 0; i < r.Runs.Count; i++)
        {
            var p = r.Runs[i].Positions.OrderBy(x).ToArray();
            double[] xs = p.Select(x).ToArray(), v = p.Select(q => q.ResidualPotential * 1e3).ToArray();
            var points = plot.Add.ScatterPoints(xs, v, Palette.Of(i));
            points.LegendText = r.Runs[i].Run;
            var bars = plot.Add.ErrorBar(xs, v, p.Select(q => q.ResidualPotentialSigma * 1e3).ToArray());
            bars.Color = Palette.Of(i);
        }
        plot.ShowLegend(Alignment.UpperRight);
        return plot;
    }

    private static Figure ResidualPotentialAgainstSeparation(NightReduction r)
    {
        Plot plot = ResidualPotentialPlot(r, "separation a (nm)", "V0 against separation", q => q.Separation * 1e9);
        for (int i = 0; i < r.Runs.Count; i++)
        {
            double lo = r.Runs[i].Positions.Min(q => q.Separation), hi = r.Runs[i].Positions.Max(q => q.Separation);
            var (v0, _, slope, _, nearest) = NightPipeline.ResidualPotential(r.Runs[i]);
            var line = plot.Add.ScatterLine(new[] { lo * 1e9, hi * 1e9 }, new[] { (v0 + slope * (lo - nearest)) * 1e3, (v0 + slope * (hi - nearest)) * 1e3 }, Palette.Of(i));
            line.LineWidth = 1;
        }
        return FigureKit.Render(plot, "v0-separation", "V0 against separation",
            "The vertex of each bias parabola with its statistical uncertainty, and each run's straight line in separation with the fitted drift of V0 in time taken out (referred to the time of the nearest position, so points measured at other times sit off it by that drift; its slope is in the calibration table).");
    }

    private static Figure ResidualPotentialAgainstTime(NightReduction r) =>
        FigureKit.Render(ResidualPotentialPlot(r, "time (h)", "V0 against time", q => q.Time / 3600), "v0-time", "V0 against time",
            "V0 of every position against the mean time of its steps (each run's own clock); the fitted drift with time is in summary.json.");

    // The calibration's model of the curvature at the fitted separations: the exact sphere–plate electrostatics
    // (physics.md), amplitude-averaged in frequency mode; F' per V^2 or F per V^2.
    private static double[] Model(NightReduction r, int run)
    {
        RunSettings settings = r.Night.Runs[run];
        var table = ElectrostaticTable.For(settings.Theory.Sphere.Radius.Value);
        double amplitude = r.Frequency ? settings.Instrument.Amplitude.Value : 0;
        return r.Runs[run].Positions.Select(p => r.Frequency ? table.AveragedGradient(p.Separation, amplitude) : table.Force(p.Separation)).ToArray();
    }

    private static Figure Curvature(NightReduction r)
    {
        Plot plot = FigureKit.New("separation a (nm)", r.Frequency ? "|curvature| (N/m per V²)" : "|curvature| (N per V²)", "Electrostatic calibration");
        FigureKit.LogAxes(plot, true, true, r.Runs.SelectMany(x => x.Positions.Select(p => p.Separation * 1e9)).ToArray(),
            r.Runs.SelectMany(x => x.Positions.Select(p => Math.Abs(p.Curvature))).ToArray());
        for (int i = 0; i < r.Runs.Count; i++)
        {
            var p = r.Runs[i].Positions;
            double[] model = Model(r, i);
            var order = Enumerable.Range(0, p.Count).OrderBy(j => p[j].Separation).ToArray();
            double[] a = FigureKit.Log(order.Select(j => p[j].Separation * 1e9));
            var points = plot.Add.ScatterPoints(a, FigureKit.Log(order.Select(j => Math.Abs(p[j].Curvature))), Palette.Of(i));
            points.LegendText = $"{r.Runs[i].Run} measured";
            var line = plot.Add.ScatterLine(a, FigureKit.Log(order.Select(j => Math.Abs(model[j]))), Palette.Of(i));
            line.LegendText = $"{r.Runs[i].Run} exact electrostatics at the fitted z0";
        }
        plot.ShowLegend(Alignment.UpperRight);
        return FigureKit.Render(plot, "curvature", "Curvature against separation",
            "The parabolas' curvatures and the exact sphere–plate electrostatic model with each run's fitted z0 and k (log axes).");
    }

    private static Figure CurvatureResiduals(NightReduction r)
    {
        Plot plot = FigureKit.New("separation a (nm)", "(measured − model) / σ", "Calibration residuals");
        for (int i = 0; i < r.Runs.Count; i++)
        {
            var p = r.Runs[i].Positions;
            double[] model = Model(r, i);
            double[] a = p.Select(x => x.Separation * 1e9).ToArray();
            double[] z = p.Select((x, j) => (x.Curvature - model[j]) / x.CurvatureSigma).ToArray();
            var points = plot.Add.ScatterPoints(a, z, Palette.Of(i));
            points.LegendText = r.Runs[i].Run;
        }
        // Reference lines at 0 and ±2 (solid: the SVG backend draws no dash patterns).
        foreach (double level in new[] { -2.0, 0, 2.0 }) plot.Add.HorizontalLine(level, level == 0 ? 1.5f : 0.75f, Palette.Of(5), LinePattern.Solid);
        plot.ShowLegend(Alignment.UpperRight);
        return FigureKit.Render(plot, "curvature-residuals", "Calibration residuals",
            "Normalised residuals of the curvatures against the model (statistical uncertainties of each parabola; the global fit also uses their correlations, so these are a guide).");
    }

    private static Figure FreeSignal(NightReduction r)
    {
        string unit = r.Frequency ? "f0 − first reference (Hz)" : "S_free − first reference";
        Plot plot = FigureKit.New("time (h)", unit, r.Frequency ? "Free resonance frequency" : "Free deflection signal");
        for (int i = 0; i < r.Runs.Count; i++)
        {
            var points = r.Runs[i].FreeSignal.Points;
            if (points.Count == 0) continue;
            double origin = points[0].Value;
            double[] t = points.Select(p => p.Time / 3600).ToArray(), v = points.Select(p => p.Value - origin).ToArray();
            var dots = plot.Add.ScatterPoints(t, v, Palette.Of(i));
            dots.LegendText = r.Runs[i].Run + (r.Runs[i].FreeSignal.IsGiven ? " (given)" : " reference steps");
            var bars = plot.Add.ErrorBar(t, v, points.Select(p => p.Sigma).ToArray());
            bars.Color = Palette.Of(i);
            var line = plot.Add.ScatterLine(t, v, Palette.Of(i));
            line.LineWidth = 1;
        }
        plot.ShowLegend(Alignment.UpperRight);
        return FigureKit.Render(plot, "free-signal", r.Frequency ? "f0 drift" : "S_free drift",
            "The free signal from the reference steps with its uncertainty, joined by the linear interpolation used between them (a random walk between references adds to the uncertainty).");
    }

    private static Figure Result(NightReduction r)
    {
        CombinedNight c = r.Combined;
        Plot plot = FigureKit.New("separation a (nm)", Quantity(r), "The night against theory");
        double[] a = FigureKit.Log(c.Separation.Select(x => x * 1e9));
        int sign = c.Value.Sum() >= 0 ? 1 : -1; // forces of an attraction are negative: |F| on log axes
        FigureKit.LogAxes(plot, true, true, c.Separation.Select(x => x * 1e9).ToArray(),
            c.Value.Select(v => sign * v).Concat(r.Comparison.SelectMany(t => t.BandLow.Concat(t.BandHigh)).Select(v => sign * v)).ToArray());
        for (int t = 0; t < r.Comparison.Count; t++)
        {
            TheoryResult th = r.Comparison[t];
            double[] low = th.BandLow.Select(x => sign * x).ToArray(), high = th.BandHigh.Select(x => sign * x).ToArray();
            var band = plot.Add.FillY(a, FigureKit.Log(low.Zip(high, Math.Min)), FigureKit.Log(low.Zip(high, Math.Max)));
            band.FillColor = Palette.Of(t).WithAlpha(0.3);
            band.LineColor = Palette.Of(t).WithAlpha(0.6);
            band.LegendText = $"{th.Theory}: 95% band";
            var line = plot.Add.ScatterLine(a, FigureKit.Log(th.Value.Select(x => sign * x)), Palette.Of(t));
            line.LegendText = th.Theory;
            line.LineWidth = 1.5f;
        }
        double[] total = c.RandomSigma.Zip(c.SystematicSigma, (x, y) => Math.Sqrt(x * x + y * y)).ToArray();
        double[] y = FigureKit.Log(c.Value.Select(v => sign * v));
        var points = plot.Add.ScatterPoints(a, y, Palette.Data);
        points.MarkerSize = 6;
        points.LegendText = "measured (night)";
        // Error bars on a log axis: half the log-width of value ± total sigma.
        var bars = plot.Add.ErrorBar(a, y, c.Value.Select((v, i) => Math.Abs(v) > total[i] ? (Math.Log10(Math.Abs(v) + total[i]) - Math.Log10(Math.Abs(v) - total[i])) / 2 : 0).ToArray());
        bars.Color = Palette.Data;
        plot.ShowLegend(Alignment.UpperRight);
        return FigureKit.Render(plot, "result", "Result against theory",
            $"The night's {(r.Frequency ? "force gradient" : "force")} with its total uncertainty and every theory with its 95% Monte Carlo band (theory inputs and the night's systematic errors); log axes{(sign < 0 ? ", |F| shown" : "")}.");
    }

    private static Figure TheoryResiduals(NightReduction r)
    {
        CombinedNight c = r.Combined;
        Plot plot = FigureKit.New("separation a (nm)", "(measured − theory) / σ", "Residuals against each theory");
        double[] a = c.Separation.Select(x => x * 1e9).ToArray();
        double[] random = c.RandomSigma;
        for (int t = 0; t < r.Comparison.Count; t++)
        {
            TheoryResult th = r.Comparison[t];
            double[] z = c.Value.Select((v, i) => (v - th.Value[i]) / Math.Sqrt(random[i] * random[i] + th.LinearSigma[i] * th.LinearSigma[i])).ToArray();
            var points = plot.Add.Scatter(a, z, Palette.Of(t));
            points.LegendText = th.Theory;
        }
        // Reference lines at 0 and ±2 (solid: the SVG backend draws no dash patterns).
        foreach (double level in new[] { -2.0, 0, 2.0 }) plot.Add.HorizontalLine(level, level == 0 ? 1.5f : 0.75f, Palette.Of(5), LinePattern.Solid);
        plot.ShowLegend(Alignment.UpperRight);
        return FigureKit.Render(plot, "theory-residuals", "Residuals against theory",
            "Data minus each theory over the point's total standard uncertainty (random and band in quadrature); the points are correlated through the systematic errors, so judge them with the chi-square, not by eye.");
    }

    private static Figure Budget(NightReduction r)
    {
        CombinedNight c = r.Combined;
        Plot plot = FigureKit.New("separation a (nm)", "relative standard uncertainty", "Error budget");
        double[] a = FigureKit.Log(c.Separation.Select(x => x * 1e9));
        double[] scale = c.Value.Select(Math.Abs).ToArray();
        var relative = c.RandomSigma.Concat(c.SystematicSigma).Concat(c.Budget().SelectMany(x => x.Sigma)).Select((v, i) => v / scale[i % scale.Length]);
        FigureKit.LogAxes(plot, true, true, c.Separation.Select(x => x * 1e9).ToArray(), relative.Where(v => v > 0).ToArray());
        double[] Relative(double[] s) => FigureKit.Log(s.Select((v, i) => v / scale[i]));
        var statistical = plot.Add.ScatterLine(a, Relative(c.RandomSigma), Palette.Data);
        statistical.LegendText = "statistical";
        statistical.LineWidth = 2;
        int k = 0;
        foreach ((string source, double[] sigma) in c.Budget())
        {
            if (sigma.All(v => v == 0)) continue;
            var line = plot.Add.Scatter(a, Relative(sigma), Palette.Of(k));
            line.LegendText = source;
            // Beyond the six colours, markers change shape so that every source stays identifiable.
            line.MarkerShape = (k / Palette.Series.Length) switch { 0 => MarkerShape.FilledCircle, 1 => MarkerShape.FilledSquare, 2 => MarkerShape.FilledTriangleUp, _ => MarkerShape.FilledDiamond };
            k++;
        }
        double[] total = c.RandomSigma.Zip(c.SystematicSigma, (x, y) => Math.Sqrt(x * x + y * y)).ToArray();
        var all = plot.Add.ScatterLine(a, Relative(total), Palette.Data);
        all.LineWidth = 3.5f;
        all.LegendText = "total";
        plot.ShowLegend(Alignment.UpperLeft);
        return FigureKit.Render(plot, "budget", "Systematic error budget",
            "Each source's standard uncertainty relative to the measured value, the statistical part and the total, against separation (log axes).");
    }

    private static string FileSafe(string name) => new(name.Select(ch => char.IsLetterOrDigit(ch) || ch is '-' or '_' ? ch : '_').ToArray());
}
