using ForceFit.Ingest.RunFiles;
using ForceFit.Ingest.Steps;
using ForceFit.Simulation;

namespace ForceFit.Ingest.Tests.Steps;

/// <summary>Steps and their uncertainties on simulated runs with known truth.</summary>
public sealed class StepStatisticsTests
{
    private static string _folder = "";
    private static NightTruth _truth = null!;
    private static NightSettings _night = null!;
    private static RunSegments[] _segments = [];

    [OneTimeSetUp]
    public static void SimulateOnce()
    {
        _folder = Path.Combine(Path.GetTempPath(), "forcefit-tests", Guid.NewGuid().ToString("N"));
        Directory.CreateDirectory(_folder);
        // AR(1) noise with lag-1 correlation 0.9, 200 samples kept per step (1.5 s at 200 Hz, 0.5 s settle),
        // every imperfection on.
        var scenario = new Scenario { Runs = 3, StepDuration = 1.5, SampleRate = 200, FrequencyNoiseCorrelation = 0.9 };
        string night = Path.Combine(_folder, "ar1");
        _truth = NightSimulator.Simulate(new SimulationRequest(night, scenario, 2026, false, SimulationRequest.DefaultColumns(scenario.Mode, false)));
        _night = RunFileReader.ReadNight(night);
        _segments = _night.Runs.Select(r => RunSteps.Read(r)).ToArray();
    }

    [OneTimeTearDown]
    public static void Remove() => Directory.Delete(_folder, recursive: true);

    [Test]
    public void Every_step_is_found_with_no_false_splits()
    {
        for (int r = 0; r < _segments.Length; r++)
        {
            var found = _segments[r].Segments;
            var truth = _truth.Runs[r].Steps;
            Assert.That(found, Has.Count.EqualTo(truth.Count), $"run {r + 1}");
            for (int i = 0; i < truth.Count; i++)
            {
                // A step starts at its first sample (a dropped first sample moves it by one period).
                Assert.That(found[i].Start, Is.EqualTo(truth[i].Start).Within(1.01 / 200), $"run {r + 1} step {i}");
                Assert.That(found[i].Kind == SegmentKind.Reference, Is.EqualTo(truth[i].IsReference));
                Assert.That(found[i].Bias, Is.EqualTo(truth[i].Bias).Within(1e-4));
            }
        }
    }

    [Test]
    public void Pulls_of_step_means_have_unit_rms_with_the_correlated_noise_model()
    {
        var pulls = new List<double>();
        var naive = new List<double>();
        for (int r = 0; r < _segments.Length; r++)
        {
            for (int i = 0; i < _truth.Runs[r].Steps.Count; i++)
            {
                SegmentStatistics s = _segments[r].Segments[i];
                double truth = _truth.Runs[r].Steps[i].MeanSignal;
                Assert.That(s.SamplesKept, Is.InRange(100, 400));
                pulls.Add((s.Mean - truth) / s.Sigma);
                naive.Add((s.Mean - truth) / s.NaiveSigma);
            }
        }
        double Rms(List<double> x) => Math.Sqrt(x.Average(v => v * v));
        TestContext.Out.WriteLine($"steps {pulls.Count}: pull rms {Rms(pulls):F3}, mean {pulls.Average():F3}; naive sd/sqrt(N) pull rms {Rms(naive):F2}; tau {_segments[0].Noise.IntegratedTime:F1}");
        Assert.That(Rms(pulls), Is.InRange(0.9, 1.1));
        Assert.That(Math.Abs(pulls.Average()), Is.LessThan(4 / Math.Sqrt(pulls.Count)));
        // The test of the test: ignoring the correlation (sd/sqrt N) fails the same criterion.
        Assert.That(Rms(naive), Is.Not.InRange(0.9, 1.1));
    }

    [Test]
    public void The_noise_model_recovers_the_injected_noise()
    {
        // Injected: sigma 5 mHz, lag-1 correlation 0.9, so tau = (1 + rho)/(1 − rho) = 19 for AR(1).
        NoiseModel noise = _segments[0].Noise;
        Assert.That(noise.SampleSigma, Is.EqualTo(5e-3).Within(0.1 * 5e-3));
        Assert.That(noise.LagOneCorrelation, Is.EqualTo(0.9).Within(0.02));
        Assert.That(noise.IntegratedTime, Is.EqualTo(19).Within(4));
    }
}
