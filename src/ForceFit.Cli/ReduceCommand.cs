using ForceFit.Analysis.Reduction;
using ForceFit.Core.Problems;
using ForceFit.Ingest;
using ForceFit.Ingest.RunFiles;

namespace ForceFit.Cli;

/// <summary>forcefit reduce: reduces a night to calibrated results and writes the report folder.</summary>
public static class ReduceCommand
{
    /// <summary>The usage lines.</summary>
    public const string Help = """
          reduce <night-folder | run.toml> --out <report-folder> [--force]
                                              steps, parabolas, calibration (z0, k, m, drifts) and the reduced
                                              force gradient or force per run; --force replaces an existing folder
        """;

    /// <summary>Runs the reduction.</summary>
    public static int Run(string[] args, TextWriter output, TextWriter errors)
    {
        string? input = null, outFolder = null;
        bool force = false;
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
        NightReduction reduction = ReductionOutputs.Reduce(night);
        ReductionOutputs.Write(reduction, outFolder, force, "forcefit " + string.Join(' ', ["reduce", .. args]), DateTimeOffset.UtcNow, Commands.ToolVersion);
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
}
