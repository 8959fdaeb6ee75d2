namespace SiloWatch.Mechanics;

/// <summary>The one place that converts between the units the library uses (kN, kPa, m, kg, GPa, microstrain).</summary>
public static class Units
{
    /// <summary>Standard gravity, m/s² (CGPM 1901 [V]).</summary>
    public const double StandardGravity = 9.80665;

    public static double MassKgToWeightKn(double massKg) => massKg * StandardGravity / 1000.0;

    public static double WeightKnToMassKg(double weightKn) => weightKn * 1000.0 / StandardGravity;

    /// <summary>Stress in kPa over a modulus in GPa gives microstrain directly (1 GPa = 1e6 kPa).</summary>
    public static double MicrostrainFromStress(double stressKPa, double modulusGPa) => stressKPa / modulusGPa;

    public static double DegToRad(double deg) => deg * Math.PI / 180.0;
}
