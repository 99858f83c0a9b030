using System.Globalization;
using ForceFit.Core.Problems;
using ForceFit.Core.Units;
using ForceFit.Simulation;

namespace ForceFit.Cli;

/// <summary>forcefit simulate: writes a synthetic night with known truth.</summary>
public static class SimulateCommand
{
    /// <summary>Option help, shown by `forcefit help`.</summary>
    public const string Help = """
          simulate --out <folder>             a synthetic night with known truth (truth in <folder>.truth.json beside it)
              --mode frequency-shift|deflection   --protocol voltage-steps|distance-ramps   --runs <n>
              --seed <n>   --truth Drude|plasma   --noise <factor>   --format csv|hdf5
              --ideal (no imperfections)   --without <list> (correlated-noise, readout-noise, settling, drift,
                v0-variation, piezo-scale, gap-drift, glitches, dropped-samples)
              --positions <n>  --biases <n>  --step <time>  --rate <frequency>
              --units time=s,piezo=nm,bias=mV,signal=Hz   --names t,zp,Ub,f_pll (column names or HDF5 paths)
        """;

    private static readonly string[] ImperfectionNames =
        ["correlated-noise", "readout-noise", "settling", "drift", "v0-variation", "piezo-scale", "gap-drift", "glitches", "dropped-samples", "stated-inputs"];

    /// <summary>Runs the command.</summary>
    public static int Run(string[] args, TextWriter output)
    {
        SimulationRequest request = Parse(args);
        NightTruth truth = NightSimulator.Simulate(request);
        long rows = truth.Runs.Sum(r => (long)r.Steps.Sum(s => (s.End - s.Start) * request.Scenario.SampleRate));
        output.WriteLine($"wrote {truth.Runs.Count} run(s), about {rows} samples, to {request.OutputFolder}");
        output.WriteLine($"truth: {NightSimulator.TruthPath(request.OutputFolder)}");
        return ExitCodes.Success;
    }

    /// <summary>Reads the options into a request.</summary>
    public static SimulationRequest Parse(string[] args)
    {
        string? outFolder = null;
        var s = new Scenario();
        ulong seed = 1;
        bool hdf5 = false;
        double noise = 1;
        string? units = null;
        string? names = null;
        var im = new Imperfections();
        for (int i = 0; i < args.Length; i++)
        {
            string Value() => i + 1 < args.Length ? args[++i] : throw new UsageException($"{args[i]} needs a value");
            switch (args[i])
            {
                case "--out": outFolder = Value(); break;
                case "--mode":
                    s = s with { Mode = Value() switch { "frequency-shift" => SimulatedMode.FrequencyShift, "deflection" => SimulatedMode.Deflection, var v => throw new UsageException($"--mode is frequency-shift or deflection, got '{v}'") } };
                    break;
                case "--protocol":
                    s = s with { Protocol = Value() switch { "voltage-steps" => SimulatedProtocol.VoltageSteps, "distance-ramps" => SimulatedProtocol.DistanceRamps, var v => throw new UsageException($"--protocol is voltage-steps or distance-ramps, got '{v}'") } };
                    break;
                case "--runs": s = s with { Runs = Whole(Value(), "--runs", 1, 1000) }; break;
                case "--seed":
                    string text = Value();
                    if (!ulong.TryParse(text, NumberStyles.None, CultureInfo.InvariantCulture, out seed)) throw new UsageException($"--seed must be a whole number, got '{text}'");
                    break;
                case "--truth":
                    string theory = Value();
                    if (theory is not ("Drude" or "drude" or "plasma")) throw new UsageException($"--truth is Drude or plasma, got '{theory}'");
                    s = s with { TruthTheory = theory.Equals("plasma", StringComparison.Ordinal) ? "plasma" : "Drude" };
                    break;
                case "--noise":
                    string factor = Value();
                    if (!double.TryParse(factor, NumberStyles.Float, CultureInfo.InvariantCulture, out noise) || !(noise >= 0))
                        throw new UsageException($"--noise is a factor of 0 or more on every noise level, got '{factor}'");
                    break;
                case "--format":
                    hdf5 = Value() switch { "csv" => false, "hdf5" => true, var v => throw new UsageException($"--format is csv or hdf5, got '{v}'") };
                    break;
                case "--ideal": im = Imperfections.None; break;
                case "--without":
                    foreach (string name in Value().Split(','))
                    {
                        im = name switch
                        {
                            "correlated-noise" => im with { CorrelatedNoise = false },
                            "readout-noise" => im with { ReadoutNoise = false },
                            "settling" => im with { Settling = false },
                            "drift" => im with { FreeFrequencyDrift = false },
                            "v0-variation" => im with { ResidualPotentialVariation = false },
                            "piezo-scale" => im with { PiezoScaleError = false },
                            "gap-drift" => im with { GapDrift = false },
                            "glitches" => im with { Glitches = false },
                            "dropped-samples" => im with { DroppedSamples = false },
                            "stated-inputs" => im with { StatedInputsDrawn = false },
                            _ => throw new UsageException($"--without: unknown imperfection '{name}'; known: {string.Join(", ", ImperfectionNames)}"),
                        };
                    }
                    break;
                case "--positions": s = s with { Positions = Whole(Value(), "--positions", 2, 10000) }; break;
                case "--biases": s = s with { Biases = Whole(Value(), "--biases", 3, 1000) }; break;
                case "--step": s = s with { StepDuration = Quantity(Value(), "--step", Dimension.Time) }; break;
                case "--rate": s = s with { SampleRate = Quantity(Value(), "--rate", Dimension.Frequency) }; break;
                case "--units": units = Value(); break;
                case "--names": names = Value(); break;
                default: throw new UsageException($"unknown option '{args[i]}' for simulate");
            }
        }
        if (outFolder is null) throw new UsageException("simulate needs --out <folder>");
        s = s with
        {
            Imperfections = im,
            FrequencyNoise = s.FrequencyNoise * noise,
            DeflectionNoise = s.DeflectionNoise * noise,
            PiezoReadoutNoise = s.PiezoReadoutNoise * noise,
            BiasReadoutNoise = s.BiasReadoutNoise * noise,
        };
        if (s.Settle >= s.StepDuration) throw new UsageException($"--step must be longer than the settle time {s.Settle} s");
        IReadOnlyList<OutputColumn> columns = SimulationRequest.DefaultColumns(s.Mode, hdf5);
        if (units is not null) columns = WithUnits(columns, units, s.Mode);
        if (names is not null)
        {
            string[] given = names.Split(',').Select(n => n.Trim()).ToArray();
            if (given.Length != 4 || given.Any(n => n.Length == 0 || n.Contains('"') || n.Contains(',')))
                throw new UsageException($"--names takes four column names (time, piezo, bias, signal) separated by commas, got '{names}'");
            if (given.Distinct(StringComparer.Ordinal).Count() != 4) throw new UsageException("--names: the four column names must differ");
            columns = columns.Select((c, i) => c with { Name = given[i] }).ToArray();
        }
        return new SimulationRequest(outFolder, s, seed, hdf5, columns);
    }

    private static IReadOnlyList<OutputColumn> WithUnits(IReadOnlyList<OutputColumn> columns, string spec, SimulatedMode mode)
    {
        var result = columns.ToArray();
        string[] channels = ["time", "piezo", "bias", "signal"];
        Dimension[] dimensions = [Dimension.Time, Dimension.Length, Dimension.Voltage, mode == SimulatedMode.FrequencyShift ? Dimension.Frequency : Dimension.Voltage];
        foreach (string part in spec.Split(','))
        {
            string[] kv = part.Split('=');
            int index = kv.Length == 2 ? Array.IndexOf(channels, kv[0].Trim()) : -1;
            if (index < 0) throw new UsageException($"--units takes channel=unit pairs for {string.Join(", ", channels)}, got '{part}'");
            string unit = kv[1].Trim();
            Unit? u = UnitTable.Find(unit);
            if (u is null || u.Dimension != dimensions[index])
                throw new UsageException($"--units: '{unit}' is not a unit of {dimensions[index].Describe()} for {channels[index]}");
            result[index] = result[index] with { Unit = unit };
        }
        return result;
    }

    private static int Whole(string text, string option, int min, int max) =>
        int.TryParse(text, NumberStyles.None, CultureInfo.InvariantCulture, out int n) && n >= min && n <= max
            ? n
            : throw new UsageException($"{option} must be a whole number from {min} to {max}, got '{text}'");

    private static double Quantity(string text, string option, Dimension dimension) =>
        QuantityParser.TryParse(text, dimension, out Measurement m, out string error) && m.Value > 0
            ? m.Value
            : throw new UsageException($"{option}: {(error.Length > 0 ? error : "must be positive")}");
}
