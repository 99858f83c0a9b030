namespace ForceFit.Simulation;

/// <summary>Which signal the simulated instrument records.</summary>
public enum SimulatedMode
{
    /// <summary>Frequency shift of a driven oscillator.</summary>
    FrequencyShift,
    /// <summary>Static deflection.</summary>
    Deflection,
}

/// <summary>How the simulated night steps through gaps and biases.</summary>
public enum SimulatedProtocol
{
    /// <summary>Bias stepped at each piezo position, with interleaved reference steps.</summary>
    VoltageSteps,
    /// <summary>Piezo ramped in and out at each bias.</summary>
    DistanceRamps,
}

/// <summary>The imperfections a simulated night may have; each can be switched off.</summary>
/// <param name="CorrelatedNoise">AR(1) frequency noise (else white).</param>
/// <param name="ReadoutNoise">Noise on the recorded piezo and bias channels.</param>
/// <param name="Settling">First-order lag of the signal after every change (tracking loop or electronics).</param>
/// <param name="FreeFrequencyDrift">Linear and random-walk drift of f0 (frequency mode) or of S_free (deflection).</param>
/// <param name="ResidualPotentialVariation">V0 varying with gap and with time.</param>
/// <param name="PiezoScaleError">True piezo scale drawn from the stated 1 ± sigma instead of exactly 1.</param>
/// <param name="GapDrift">Slow drift of the gap offset.</param>
/// <param name="Glitches">Occasional spikes in the signal.</param>
/// <param name="DroppedSamples">Occasional missing rows.</param>
/// <param name="StatedInputsDrawn">True radius, temperature, plasma frequency, damping, beyond-PFA coefficient and amplitude drawn from the stated values ± their uncertainties instead of exactly the stated values.</param>
public sealed record Imperfections(
    bool CorrelatedNoise = true,
    bool ReadoutNoise = true,
    bool Settling = true,
    bool FreeFrequencyDrift = true,
    bool ResidualPotentialVariation = true,
    bool PiezoScaleError = true,
    bool GapDrift = true,
    bool Glitches = true,
    bool DroppedSamples = true,
    bool StatedInputsDrawn = true)
{
    /// <summary>An ideal night: only white noise of the stated size.</summary>
    public static Imperfections None { get; } = new(false, false, false, false, false, false, false, false, false, false);
}

/// <summary>
/// The parameters of a simulated night, SI throughout. The defaults describe an invented set-up, the
/// "Tarn Valley bench": a gold-coated sphere of R = 150 um over a gold plate at 295 K. Their sizes are of the
/// order of those in published sphere–plate experiments: micromechanical torsional oscillators and AFM cantilevers
/// with spheres of 50–150 um (H. B. Chan et al., Science 291, 1941 (2001); R. S. Decca et al., Phys. Rev. D 75,
/// 077101 (2007); C.-C. Chang et al., Phys. Rev. B 85, 165443 (2012)), separations of 100 nm – 1 um and residual
/// potentials of tens of mV. They are illustrative, not values of those experiments.
/// </summary>
public sealed record Scenario
{
    /// <summary>Frequency-shift or deflection.</summary>
    public SimulatedMode Mode { get; init; } = SimulatedMode.FrequencyShift;
    /// <summary>Voltage steps or distance ramps.</summary>
    public SimulatedProtocol Protocol { get; init; } = SimulatedProtocol.VoltageSteps;
    /// <summary>Number of runs in the night.</summary>
    public int Runs { get; init; } = 2;
    /// <summary>The theory used as truth: "Drude" or "plasma" (gold, wp = 9.0 eV, gamma = 35 meV).</summary>
    public string TruthTheory { get; init; } = "Drude";
    /// <summary>Switchable imperfections.</summary>
    public Imperfections Imperfections { get; init; } = new();

    /// <summary>Sphere radius R (m).</summary>
    public double Radius { get; init; } = 150e-6;
    /// <summary>Temperature (K).</summary>
    public double Temperature { get; init; } = 295.0;
    /// <summary>Gold plasma frequency (eV) and damping (eV) of the truth's materials.</summary>
    public double PlasmaFrequencyEv { get; init; } = 9.0;
    /// <summary>Drude damping (eV).</summary>
    public double DampingEv { get; init; } = 0.035;
    /// <summary>rms roughness of sphere and plate (m).</summary>
    public double SphereRoughness { get; init; } = 1.1e-9;
    /// <summary>rms roughness of the plate (m).</summary>
    public double PlateRoughness { get; init; } = 0.9e-9;

    /// <summary>Effective spring constant (N/m): 0.5 for the oscillator, 0.05 for the static cantilever when left at NaN.</summary>
    public double SpringConstant { get; init; } = double.NaN;
    /// <summary>Free resonance frequency (Hz), frequency mode.</summary>
    public double FreeFrequency { get; init; } = 25_000.0;
    /// <summary>Oscillation amplitude (m), frequency mode.</summary>
    public double Amplitude { get; init; } = 2e-9;
    /// <summary>Deflection sensitivity m (m per volt), deflection mode.</summary>
    public double DeflectionSensitivity { get; init; } = 20e-9;
    /// <summary>Signal with no force S_free (V), deflection mode.</summary>
    public double DeflectionFree { get; init; } = 0.150;

    /// <summary>Gap offset z0 (m): the gap at piezo reading 0.</summary>
    public double GapOffset { get; init; } = 80e-9;
    /// <summary>
    /// Standard uncertainty of the piezo scale. The run file states "1.000 ± sigma"; with the imperfection on, the
    /// true scale of each night is drawn from that distribution (so pulls over many nights test its propagation).
    /// </summary>
    public double PiezoScaleSigma { get; init; } = 0.005;
    /// <summary>Stated standard uncertainty of the sphere radius (m), written into the run files.</summary>
    public const double RadiusSigma = 0.2e-6;
    /// <summary>Stated standard uncertainty of the temperature (K).</summary>
    public const double TemperatureSigma = 0.5;
    /// <summary>Stated standard uncertainty of the plasma frequency (eV).</summary>
    public const double PlasmaFrequencySigmaEv = 0.05;
    /// <summary>Stated standard uncertainty of the Drude damping (eV).</summary>
    public const double DampingSigmaEv = 0.005;
    /// <summary>Stated standard uncertainty of the beyond-PFA coefficient (stated value 0).</summary>
    public const double ThetaSigma = 0.5;
    /// <summary>Stated relative uncertainty of the oscillation amplitude.</summary>
    public const double AmplitudeRelativeSigma = 0.1;
    /// <summary>Residual potential V0 (V) at the reference gap.</summary>
    public double ResidualPotential { get; init; } = 0.021;
    /// <summary>Change of V0 with gap (V/m).</summary>
    public double ResidualPotentialGapSlope { get; init; } = 2.0e3; // 2 mV per um
    /// <summary>Change of V0 with time (V/s).</summary>
    public double ResidualPotentialTimeSlope { get; init; } = 1.0e-3 / 3600; // 1 mV per hour

    /// <summary>Closest and farthest measured gaps (m).</summary>
    public double NearestGap { get; init; } = 120e-9;
    /// <summary>Farthest measured gap (m).</summary>
    public double FarthestGap { get; init; } = 1000e-9;
    /// <summary>Piezo positions per run (voltage steps).</summary>
    public int Positions { get; init; } = 24;
    /// <summary>Biases per position (voltage steps) or per run (ramps).</summary>
    public int Biases { get; init; } = 7;
    /// <summary>Largest |V − V0| at the nearest gap (V); grows as (a/a_min)^0.75 up to 0.5 V.</summary>
    public double BiasSpanNear { get; init; } = 0.12;
    /// <summary>Duration of each step (s).</summary>
    public double StepDuration { get; init; } = 2.0;
    /// <summary>Reference (force-free) gap (m) for interleaved reference steps and the far end of ramps; NaN: 10 um for steps, 2 um for ramps.</summary>
    public double ReferenceGap { get; init; } = double.NaN;
    /// <summary>Ramp speed of the piezo (m/s), distance ramps.</summary>
    public double RampSpeed { get; init; } = 40e-9;
    /// <summary>Sampling rate (Hz).</summary>
    public double SampleRate { get; init; } = 200.0;
    /// <summary>Time discarded at the start of each step by the analysis, written into the run file (s).</summary>
    public double Settle { get; init; } = 0.5;
    /// <summary>Time discarded at the start of every ramp sweep (and hold), written into ramp run files (s): ten lag times.</summary>
    public double RampSettle { get; init; } = 0.3;
    /// <summary>Gap bin width written into ramp run files (m).</summary>
    public double BinWidth { get; init; } = 2e-9;

    /// <summary>Frequency noise rms (Hz) and its lag-1 correlation.</summary>
    public double FrequencyNoise { get; init; } = 5e-3;
    /// <summary>Lag-1 correlation of the AR(1) frequency noise.</summary>
    public double FrequencyNoiseCorrelation { get; init; } = 0.9;
    /// <summary>White deflection-signal noise (V).</summary>
    public double DeflectionNoise { get; init; } = 0.5e-3;
    /// <summary>Readout noise of the recorded piezo (m) and bias (V) channels.</summary>
    public double PiezoReadoutNoise { get; init; } = 0.05e-9;
    /// <summary>Readout noise of the recorded bias (V).</summary>
    public double BiasReadoutNoise { get; init; } = 0.1e-3;
    /// <summary>Time constant of the signal's lag after a change (s).</summary>
    public double SettlingTime { get; init; } = 0.03;
    /// <summary>Linear drift of f0 (Hz/s).</summary>
    public double FreeFrequencyDriftRate { get; init; } = 0.02 / 3600;
    /// <summary>Random-walk drift of f0 (Hz per sqrt(s)).</summary>
    public double FreeFrequencyRandomWalk { get; init; } = 2e-4;
    /// <summary>Linear drift of S_free (V/s), deflection mode.</summary>
    public double DeflectionFreeDriftRate { get; init; } = 1e-3 / 3600;
    /// <summary>Gap drift (m/s).</summary>
    public double GapDriftRate { get; init; } = 1e-9 / 3600;
    /// <summary>Glitches per hour and their size in noise sigmas.</summary>
    public double GlitchesPerHour { get; init; } = 6;
    /// <summary>Size of a glitch in units of the signal noise.</summary>
    public double GlitchSize { get; init; } = 40;
    /// <summary>Probability that a sample is missing.</summary>
    public double DropProbability { get; init; } = 1e-4;

    /// <summary>The reference gap actually used.</summary>
    public double EffectiveReferenceGap => double.IsNaN(ReferenceGap) ? (Protocol == SimulatedProtocol.VoltageSteps ? 10e-6 : 2e-6) : ReferenceGap;

    /// <summary>The spring constant actually used.</summary>
    public double EffectiveSpringConstant => double.IsNaN(SpringConstant) ? (Mode == SimulatedMode.FrequencyShift ? 0.5 : 0.05) : SpringConstant;
}
