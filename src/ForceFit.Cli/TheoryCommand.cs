using System.Globalization;
using ForceFit.Analysis.Tables;
using ForceFit.Analysis.Theory;
using ForceFit.Core.Problems;
using ForceFit.Core.Units;
using ForceFit.Ingest.RunFiles;

namespace ForceFit.Cli;

/// <summary>
/// forcefit theory: Lifshitz/PFA predictions for every [[theory]] of a file, one CSV row per theory and
/// separation (run-files.md).
/// </summary>
public static class TheoryCommand
{
    /// <summary>The columns of the output, in order (run-files.md).</summary>
    public static readonly string[] Header = ["theory", "separation_m", "pressure_Pa", "free_energy_J_per_m2", "force_N", "force_gradient_N_per_m"];

    /// <summary>Runs the command.</summary>
    public static int Run(string[] args, TextWriter output, TextWriter errors)
    {
        Options o = Parse(args);
        TheoryInputs inputs = RunFileReader.ReadTheoryInputs(o.Input);
        IReadOnlyList<PreparedTheory> theories = TheoryModels.Prepare(inputs);
        IReadOnlyList<TheoryRow> rows = TheoryModels.Evaluate(theories, o.Separations);
        var table = rows.Select(r => (IReadOnlyList<string>)[r.Theory, CsvTable.Number(r.Separation), CsvTable.Number(r.Pressure),
            CsvTable.Number(r.FreeEnergy), CsvTable.Number(r.Force), CsvTable.Number(r.ForceGradient)]);
        double worst = rows.Max(r => Math.Abs(r.PressureError / r.Pressure));
        if (o.Out is null)
        {
            output.Write(CsvTable.ToText(Header, table));
        }
        else
        {
            CsvTable.Write(o.Out, Header, table);
            output.WriteLine($"wrote {rows.Count} rows ({theories.Count} theories x {o.Separations.Count} separations) to {o.Out}");
        }
        errors.WriteLine($"temperature {inputs.Surfaces.Temperature.Display("K", 6)}; largest estimated relative numerical error of the pressure: {worst.ToString("G2", CultureInfo.InvariantCulture)}");
        return ExitCodes.Success;
    }

    private sealed record Options(string Input, IReadOnlyList<double> Separations, string? Out);

    private static Options Parse(string[] args)
    {
        if (args.Length == 0 || args[0].StartsWith('-')) throw new UsageException("theory needs a night folder or a .toml file first");
        string input = args[0];
        string? from = null, to = null, count = null, at = null, outFile = null, spacing = null;
        for (int i = 1; i < args.Length; i++)
        {
            string Value() => i + 1 < args.Length ? args[++i] : throw new UsageException($"{args[i]} needs a value");
            switch (args[i])
            {
                case "--from": from = Value(); break;
                case "--to": to = Value(); break;
                case "--count": count = Value(); break;
                case "--at": at = Value(); break;
                case "--out": outFile = Value(); break;
                case "--spacing": spacing = Value(); break;
                default: throw new UsageException($"unknown option '{args[i]}' for theory");
            }
        }
        if (at is not null)
        {
            if (from is not null || to is not null || count is not null) throw new UsageException("give either --at or --from/--to/--count, not both");
            return new Options(input, at.Split(',').Select(s => Length(s.Trim(), "--at")).ToArray(), outFile);
        }
        if (from is null || to is null || count is null) throw new UsageException("give --from, --to and --count (or --at a list of separations)");
        double a0 = Length(from, "--from"), a1 = Length(to, "--to");
        if (!int.TryParse(count, NumberStyles.None, CultureInfo.InvariantCulture, out int n) || n < 1)
            throw new UsageException($"--count must be a whole number of at least 1, got '{count}'");
        if (n > 1 && !(a1 > a0)) throw new UsageException("--to must be larger than --from");
        bool log = spacing switch
        {
            null or "linear" => false,
            "log" => true,
            _ => throw new UsageException($"--spacing is 'linear' or 'log', got '{spacing}'"),
        };
        var separations = Enumerable.Range(0, n)
            .Select(i => n == 1 ? a0 : log ? a0 * Math.Pow(a1 / a0, i / (n - 1.0)) : a0 + (a1 - a0) * i / (n - 1.0))
            .ToArray();
        return new Options(input, separations, outFile);
    }

    private static double Length(string text, string option)
    {
        if (!QuantityParser.TryParse(text, Dimension.Length, out Measurement m, out string error))
            throw new UsageException($"{option}: {error}");
        if (!(m.Value > 0)) throw new UsageException($"{option}: a separation must be positive, got '{text}'");
        return m.Value;
    }
}
