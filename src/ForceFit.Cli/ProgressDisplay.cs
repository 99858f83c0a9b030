using System.Diagnostics;
using ForceFit.Analysis.Reduction;

namespace ForceFit.Cli;

/// <summary>
/// Progress of the long stages on standard error: one line rewritten in place on a terminal, plain lines at most
/// every five seconds (and at each stage's end) when standard error is redirected, nothing with --quiet.
/// </summary>
public sealed class ProgressDisplay(TextWriter errors, bool terminal) : IProgress<StageProgress>
{
    private readonly Lock _lock = new();
    private readonly Stopwatch _clock = Stopwatch.StartNew();
    private TimeSpan _lastLine = TimeSpan.MinValue;
    private string _lastStage = "";
    private bool _open;

    /// <summary>Shows one report.</summary>
    public void Report(StageProgress p)
    {
        lock (_lock)
        {
            double fraction = p.Total > 0 ? Math.Clamp((double)p.Done / p.Total, 0, 1) : 1;
            string amount = p.Stage == "ingest" ? $"{p.Done / 1e6:F1} of {p.Total / 1e6:F1} MB" : $"{p.Done} of {p.Total}";
            string text = $"{p.Stage}: {fraction * 100,3:F0}% ({amount}, {p.Item})";
            bool finished = p.Done >= p.Total;
            if (terminal)
            {
                errors.Write("\r" + text.PadRight(72));
                _open = true;
                if (finished) { errors.WriteLine(); _open = false; }
                return;
            }
            bool newStage = p.Stage != _lastStage;
            if (newStage || finished || _clock.Elapsed - _lastLine >= TimeSpan.FromSeconds(5))
            {
                errors.WriteLine(text);
                _lastLine = _clock.Elapsed;
                _lastStage = p.Stage;
            }
        }
    }

    /// <summary>Ends an open terminal line (before other messages are written).</summary>
    public void Finish()
    {
        lock (_lock)
        {
            if (_open) errors.WriteLine();
            _open = false;
        }
    }
}
