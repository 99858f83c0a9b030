namespace ForceFit.Cli;

/// <summary>Entry point of the forcefit command.</summary>
public static class Program
{
    /// <summary>Runs the command with the process's console streams; Ctrl-C cancels the running command (exit status 130).</summary>
    public static int Main(string[] args)
    {
        using var cancel = new CancellationTokenSource();
        Console.CancelKeyPress += (_, e) =>
        {
            e.Cancel = true; // let the command stop cleanly and remove its temporary files
            cancel.Cancel();
        };
        return Commands.Run(args, Console.Out, Console.Error, !Console.IsErrorRedirected, cancel.Token);
    }
}
