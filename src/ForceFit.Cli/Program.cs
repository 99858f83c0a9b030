namespace ForceFit.Cli;

/// <summary>Entry point of the forcefit command.</summary>
public static class Program
{
    /// <summary>Runs the command with the process's console streams.</summary>
    public static int Main(string[] args) => Commands.Run(args, Console.Out, Console.Error);
}
