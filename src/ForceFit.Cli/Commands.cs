using System.Reflection;
using ForceFit.Core.Problems;

namespace ForceFit.Cli;

/// <summary>Dispatches the verbs of the forcefit command; each verb calls one library method.</summary>
public static class Commands
{
    private static readonly string Usage = UsageText
        .Replace("@simulate@", SimulateCommand.Help.TrimEnd('\n'), StringComparison.Ordinal)
        .Replace("@reduce@", ReduceCommand.Help.TrimEnd('\n'), StringComparison.Ordinal)
        .Replace("@notebook@", NotebookCommand.Help.TrimEnd('\n'), StringComparison.Ordinal);

    private const string UsageText = """
        usage: forcefit <command> [options]

        commands:
          check <night-folder | run.toml>    read and validate the run files, confirm the data columns,
                                              print the resolved settings per run
          theory <night-folder | file.toml>  Lifshitz/PFA predictions for every [[theory]] as CSV:
              --from <length> --to <length> --count <n> [--spacing linear|log]
              or --at <length>,<length>,...;  --out <file.csv> (standard output without it)
        @reduce@
        @notebook@
        @simulate@
          help                                this text
          version                             the tool version

        exit status: 0 success, 1 wrong input (the message names the file and line or key),
                     2 wrong usage, 3 an analysis that cannot be trusted, 130 stopped by Ctrl-C
        """;

    /// <summary>Runs one command; returns the exit status.</summary>
    /// <param name="args">Command-line arguments.</param>
    /// <param name="output">Where results go.</param>
    /// <param name="errors">Where messages go.</param>
    public static int Run(string[] args, TextWriter output, TextWriter errors) => Run(args, output, errors, errorsIsTerminal: false, CancellationToken.None);

    /// <summary>Runs one command with a cancellation token (Ctrl-C) and whether standard error is a terminal (for progress).</summary>
    public static int Run(string[] args, TextWriter output, TextWriter errors, bool errorsIsTerminal, CancellationToken cancel)
    {
        if (args.Length == 0)
        {
            errors.WriteLine(Usage);
            return ExitCodes.UsageError;
        }
        try
        {
            return args[0] switch
            {
                "check" => CheckCommand.Run(args[1..], output),
                "theory" => TheoryCommand.Run(args[1..], output, errors),
                "simulate" => SimulateCommand.Run(args[1..], output),
                "reduce" => ReduceCommand.Run(args[1..], output, errors, errorsIsTerminal, cancel),
                "notebook" => NotebookCommand.Run(args[1..], output),
                "help" or "--help" or "-h" => Help(output),
                "version" or "--version" => Version(output),
                _ => UsageFailure(errors, $"unknown command '{args[0]}'"),
            };
        }
        catch (UsageException e)
        {
            return UsageFailure(errors, e.Message);
        }
        catch (OperationCanceledException)
        {
            errors.WriteLine();
            errors.WriteLine("stopped: cancelled before anything was written (no report folder was created or changed)");
            return ExitCodes.Cancelled;
        }
        catch (InputException e)
        {
            const int shown = 30;
            foreach (Problem p in e.Problems.Take(shown)) errors.WriteLine("error: " + p);
            if (e.Problems.Count > shown) errors.WriteLine($"... and {e.Problems.Count - shown} more problems");
            return ExitCodes.InputError;
        }
    }

    /// <summary>The informational version of the tool.</summary>
    public static string ToolVersion =>
        typeof(Commands).Assembly.GetCustomAttribute<AssemblyInformationalVersionAttribute>()?.InformationalVersion.Split('+')[0] ?? "0.0.0";

    private static int Help(TextWriter output)
    {
        output.WriteLine(Usage);
        return ExitCodes.Success;
    }

    private static int Version(TextWriter output)
    {
        output.WriteLine("forcefit " + ToolVersion);
        return ExitCodes.Success;
    }

    private static int UsageFailure(TextWriter errors, string message)
    {
        errors.WriteLine("usage error: " + message);
        errors.WriteLine("run 'forcefit help' for the commands and options");
        return ExitCodes.UsageError;
    }
}

/// <summary>Wrong use of the command line (exit status 2).</summary>
public sealed class UsageException(string message) : Exception(message);
