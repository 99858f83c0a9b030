namespace ForceFit.Cli;

/// <summary>forcefit theory: predictions for every [[theory]] of a file.</summary>
public static class TheoryCommand
{
    /// <summary>Runs the theory command.</summary>
    public static int Run(string[] args, TextWriter output, TextWriter errors)
    {
        _ = args;
        _ = output;
        _ = errors;
        throw new UsageException("the theory command is not available in this build yet");
    }
}
