using ForceFit.Core.Problems;
using ForceFit.Ingest.Data;
using ForceFit.Ingest.RunFiles;

namespace ForceFit.Ingest;

/// <summary>What `forcefit check` does: read and validate a night, then confirm every mapped column exists.</summary>
public static class NightCheck
{
    /// <summary>Returns the validated night, or throws an <see cref="InputException"/> listing every problem.</summary>
    /// <param name="path">A night folder or a run's .toml file.</param>
    public static NightSettings Run(string path)
    {
        NightSettings night = RunFileReader.ReadNight(path);
        var problems = night.Runs.SelectMany(DataFileProbe.CheckColumns).ToList();
        if (problems.Count > 0) throw new InputException(problems);
        return night;
    }
}
