using ForceFit.Analysis.Comparison;
using ForceFit.Analysis.Reduction;
using ForceFit.Reporting;
using ForceFit.Core.Problems;
using ForceFit.Ingest;
using ForceFit.Ingest.RunFiles;

namespace ForceFit.Cli;

/// <summary>forcefit reduce: reduces a night to calibrated results and writes the report folder.</summary>
public static class ReduceCommand
{
    /// <summary>The usage lines.</summary>
    public const string Help = """
          reduce <night-folder | run.toml> --out <report-folder> [--force] [--quiet] [--draws <n>] [--seed <n>]
                                              steps, parabolas, calibration (z0, k, m, drifts), the night combined,
                                              the comparison with every [[theory]] (Monte Carlo bands: --draws, default
                                              1000, --seed) and the report (HTML, Markdown, figures, tables, JSON);
                                              --force replaces an existing folder, --quiet hides the progress
        """;

    /// <summary>Runs the reduction.</summary>
    public static int Run(string[] args, TextWriter output, TextWriter errors, bool errorsIsTerminal = false, CancellationToken cancel = default)
    {
        string? input = null, outFolder = null;
        bool force = false, quiet = false;
        var defaults = new ComparisonOptions();
        int draws = defaults.Draws, seed = defaults.Seed;
        for (int i = 0; i < args.Length; i++)
        {
            switch (args[i])
            {
                case "--out":
                    if (i + 1 >= args.Length) throw new UsageException("--out needs a folder");
                    outFolder = args[++i];
                    break;
                case "--force":
                    force = true;
                    break;
                case "--quiet":
                    quiet = true;
                    break;
                case "--draws":
                    draws = Whole(args, ++i, "--draws", 0, 1_000_000);
                    break;
                case "--seed":
                    seed = Whole(args, ++i, "--seed", 0, int.MaxValue);
                    break;
                default:
                    if (args[i].StartsWith('-')) throw new UsageException($"unknown option '{args[i]}' for reduce");
                    if (input is not null) throw new UsageException("reduce takes one night folder or run file");
                    input = args[i];
                    break;
            }
        }
        if (input is null) throw new UsageException("reduce needs a night folder or a run's .toml file");
        if (outFolder is null) throw new UsageException("reduce needs --out <report-folder>");
        NightSettings night = NightCheck.Run(input);
        ReportFolder.CheckTarget(outFolder, night.Folder, force); // before the work, not after it
        var progress = quiet ? null : new ProgressDisplay(errors, errorsIsTerminal);
        NightReduction reduction = NightPipeline.Reduce(night, new ComparisonOptions(draws, seed), cancel, progress);
        progress?.Finish();
        ReportFolder.Write(reduction, outFolder, force, "forcefit " + string.Join(' ', ["reduce", .. args]), DateTimeOffset.UtcNow, Commands.ToolVersion);
        foreach (RunResult r in reduction.Runs)
            output.WriteLine($"{r.Run}: z0 = {r.Calibration.GapOffset.Value * 1e9:F3} ± {r.Calibration.GapOffset.Sigma * 1e9:F3} nm, k = {r.Calibration.SpringConstant.Value:G6} ± {r.Calibration.SpringConstant.Sigma:G2} N/m, calibration chi2 = {r.Calibration.ChiSquare:F1} for {r.Calibration.DegreesOfFreedom}");
        if (reduction.TrustProblems.Count > 0)
        {
            foreach (string t in reduction.TrustProblems) errors.WriteLine("cannot be trusted: " + t);
            output.WriteLine($"report written to {outFolder} (with the trust problems at its top)");
            return ExitCodes.Untrusted;
        }
        output.WriteLine($"ok: report written to {outFolder}");
        return ExitCodes.Success;
    }

    private static int Whole(string[] args, int i, string option, int min, int max)
    {
        if (i >= args.Length) throw new UsageException($"{option} needs a whole number");
        if (!int.TryParse(args[i], System.Globalization.NumberStyles.None, System.Globalization.CultureInfo.InvariantCulture, out int value) || value < min || value > max)
            throw new UsageException($"{option} must be a whole number from {min} to {max}, got '{args[i]}'");
        return value;
    }
}
