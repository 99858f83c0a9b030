using ForceFit.Reporting;

namespace ForceFit.Cli;

/// <summary>forcefit notebook: a Jupyter notebook that redraws a report's figures from its tables.</summary>
public static class NotebookCommand
{
    /// <summary>The usage lines.</summary>
    public const string Help = """
          notebook <report-folder> [--out <file.ipynb>]
                                              a Jupyter notebook (pandas, matplotlib) that loads the report's
                                              tables and redraws the comparison; default <report-folder>/notebook.ipynb
        """;

    /// <summary>Writes the notebook.</summary>
    public static int Run(string[] args, TextWriter output)
    {
        string? report = null, outFile = null;
        for (int i = 0; i < args.Length; i++)
        {
            if (args[i] == "--out")
            {
                if (i + 1 >= args.Length) throw new UsageException("--out needs a file name");
                outFile = args[++i];
            }
            else if (args[i].StartsWith('-')) throw new UsageException($"unknown option '{args[i]}' for notebook");
            else if (report is not null) throw new UsageException("notebook takes one report folder");
            else report = args[i];
        }
        if (report is null) throw new UsageException("notebook needs a report folder written by 'forcefit reduce'");
        outFile ??= Path.Combine(report, "notebook.ipynb");
        NotebookExport.Write(report, outFile);
        output.WriteLine($"ok: notebook written to {outFile}");
        return Core.Problems.ExitCodes.Success;
    }
}
