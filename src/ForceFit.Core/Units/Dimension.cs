namespace ForceFit.Core.Units;

/// <summary>The physical dimension a quantity in a run file must have.</summary>
public enum Dimension
{
    /// <summary>A pure number (piezo scale, beyond-PFA coefficient, eps_inf).</summary>
    Dimensionless,
    /// <summary>Metres.</summary>
    Length,
    /// <summary>Seconds.</summary>
    Time,
    /// <summary>Hertz (cycles per second).</summary>
    Frequency,
    /// <summary>Volts.</summary>
    Voltage,
    /// <summary>Kelvin.</summary>
    Temperature,
    /// <summary>Newtons per metre (spring constants, force gradients).</summary>
    SpringConstant,
    /// <summary>Joules; written in eV or meV in run files.</summary>
    Energy,
    /// <summary>Joules squared; written in eV^2 (oscillator strengths).</summary>
    EnergySquared,
    /// <summary>Radians per second. A photon energy (eV) is accepted and converted by omega = E / hbar.</summary>
    AngularFrequency,
    /// <summary>(rad/s)^2, oscillator strengths. eV^2 is accepted and converted by g = G / hbar^2.</summary>
    AngularFrequencySquared,
    /// <summary>Metres per volt (deflection sensitivity of a voltage signal).</summary>
    LengthPerVoltage,
}

/// <summary>Plain names of dimensions for messages.</summary>
public static class DimensionNames
{
    /// <summary>A phrase such as "a length" for use in messages.</summary>
    public static string Describe(this Dimension dimension) => dimension switch
    {
        Dimension.Dimensionless => "a dimensionless number",
        Dimension.Length => "a length",
        Dimension.Time => "a time",
        Dimension.Frequency => "a frequency",
        Dimension.Voltage => "a voltage",
        Dimension.Temperature => "a temperature",
        Dimension.SpringConstant => "a spring constant",
        Dimension.Energy => "an energy",
        Dimension.EnergySquared => "an energy squared",
        Dimension.AngularFrequency => "an angular frequency",
        Dimension.AngularFrequencySquared => "an angular frequency squared",
        Dimension.LengthPerVoltage => "a length per volt",
        _ => dimension.ToString(),
    };

    /// <summary>Example units for a dimension, for hints in messages.</summary>
    public static string ExampleUnits(this Dimension dimension) => dimension switch
    {
        Dimension.Dimensionless => "no unit",
        Dimension.Length => "m, mm, um, nm, pm",
        Dimension.Time => "s, ms, us",
        Dimension.Frequency => "Hz, kHz, MHz",
        Dimension.Voltage => "V, mV, uV",
        Dimension.Temperature => "K",
        Dimension.SpringConstant => "N/m",
        Dimension.Energy => "eV, meV",
        Dimension.EnergySquared => "eV^2",
        Dimension.AngularFrequency => "eV, meV, rad/s",
        Dimension.AngularFrequencySquared => "eV^2",
        Dimension.LengthPerVoltage => "m/V, nm/V",
        _ => "",
    };
}
