namespace ForceFit.Core.Problems;

/// <summary>Something wrong with the user's input, located in a file and, where known, a line (1-based).</summary>
/// <param name="File">The file as the user named it.</param>
/// <param name="Line">The 1-based line, or null where the problem has no single line (a missing key).</param>
/// <param name="Message">What is wrong, naming the key or column.</param>
public sealed record Problem(string File, int? Line, string Message)
{
    /// <summary>"file:line: message", or "file: message" without a line.</summary>
    public override string ToString() => Line is int line ? $"{File}:{line}: {Message}" : $"{File}: {Message}";
}

/// <summary>Thrown at the edges when input is wrong; carries every problem found, in file order.</summary>
public sealed class InputException : Exception
{
    /// <summary>Creates the exception from one or more problems.</summary>
    public InputException(params IReadOnlyList<Problem> problems)
        : base(string.Join(Environment.NewLine, problems.Select(p => p.ToString())))
    {
        if (problems.Count == 0) throw new ArgumentException("at least one problem is needed", nameof(problems));
        Problems = problems;
    }

    /// <summary>The problems, at least one.</summary>
    public IReadOnlyList<Problem> Problems { get; }
}

/// <summary>Exit codes of the forcefit command (run-files.md, section Outputs).</summary>
public static class ExitCodes
{
    /// <summary>Success.</summary>
    public const int Success = 0;
    /// <summary>The input is wrong; the message names the file and the line or key.</summary>
    public const int InputError = 1;
    /// <summary>Wrong usage of the command line.</summary>
    public const int UsageError = 2;
    /// <summary>An analysis that cannot be trusted; the report is still written with the reason at the top.</summary>
    public const int Untrusted = 3;
    /// <summary>Stopped by Ctrl-C (128 + SIGINT).</summary>
    public const int Cancelled = 130;
}
