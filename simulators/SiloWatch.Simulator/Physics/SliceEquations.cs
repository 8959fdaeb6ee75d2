namespace SiloWatch.Simulator.Physics;

/// <summary>
/// Vertical stress down a prismatic section, integrated numerically from the slice equilibrium
/// dp_v/dz = γ − (K·μ·U/A)·p_v [D, Janssen 1895] with the accumulated wall friction per metre of
/// perimeter dn_z/dz = μ·K·p_v carried along as a second state.
/// </summary>
public sealed record VerticalProfile(double[] DepthM, double[] VerticalKPa, double[] WallFrictionKnPerM)
{
    public static readonly VerticalProfile Empty = new([0.0], [0.0], [0.0]);

    public double BottomDepthM => DepthM[^1];

    public double BottomVerticalKPa => VerticalKPa[^1];

    public double BottomWallFrictionKnPerM => WallFrictionKnPerM[^1];

    /// <summary>p_v at a depth below the contact, linear between grid points; 0 above the surface.</summary>
    public double VerticalAt(double depthM) => Interpolate(VerticalKPa, depthM);

    /// <summary>n_z at a depth below the contact (friction accumulated from the surface), kN/m.</summary>
    public double WallFrictionAt(double depthM) => Interpolate(WallFrictionKnPerM, depthM);

    private double Interpolate(double[] values, double depthM)
    {
        if (depthM <= 0 || DepthM.Length < 2)
        {
            return depthM < 0 ? 0 : values[0];
        }

        if (depthM >= BottomDepthM)
        {
            return values[^1];
        }

        var step = BottomDepthM / (DepthM.Length - 1);
        var i = Math.Min((int)(depthM / step), DepthM.Length - 2);
        var t = (depthM - DepthM[i]) / step;
        return values[i] + (t * (values[i + 1] - values[i]));
    }
}

/// <summary>Stress down a converging hopper and the forces it passes to its supports.</summary>
public sealed record HopperProfile(double TransitionVerticalKPa, double OutletVerticalKPa, double ContentsWeightKn, double WallVerticalForceKn, double OutletForceKn, double TransitionForceKn)
{
    public static readonly HopperProfile None = new(0, 0, 0, 0, 0, 0);

    /// <summary>Everything the hopper structure carries: the load at its top plus its own contents [D].</summary>
    public double TotalKn => TransitionForceKn + ContentsWeightKn;
}

public static class SliceEquations
{
    /// <summary>Grid step target for the depth integration, m: fine enough that RK4 is exact to ~1e-9.</summary>
    public const double StepM = 0.05;

    /// <summary>
    /// Integrates p_v and n_z from the contact (p_v = surcharge) down to <paramref name="depthM"/>
    /// [D: dp_v/dz = γ − p_v/z0, z0 = (A/U)/(K·μ)].
    /// </summary>
    public static VerticalProfile Vertical(double unitWeightKnM3, double kMu, double hydraulicRadiusM, double surchargeKPa, double depthM)
    {
        if (depthM <= 0)
        {
            return new VerticalProfile([0.0], [surchargeKPa], [0.0]);
        }

        var steps = Math.Max(8, (int)Math.Ceiling(depthM / StepM));
        var decay = kMu / hydraulicRadiusM;
        var rows = Rk4.Integrate(
            (_, y, d) =>
            {
                d[0] = unitWeightKnM3 - (decay * y[0]);
                d[1] = kMu * y[0];
            },
            [surchargeKPa, 0.0],
            0,
            depthM,
            steps);
        var depth = new double[steps + 1];
        var pv = new double[steps + 1];
        var nz = new double[steps + 1];
        for (var i = 0; i <= steps; i++)
        {
            depth[i] = depthM * i / steps;
            pv[i] = rows[2 * i];
            nz[i] = rows[(2 * i) + 1];
        }

        return new VerticalProfile(depth, pv, nz);
    }

    /// <summary>
    /// Hopper wall normal pressure ratio in filling for a steep hopper:
    /// F = 1 − b/(1 + tanβ/μ_h), b = 0.2 [M: EN 1991-4 §6.3.2 structure, from memory].
    /// </summary>
    public static double HopperPressureRatio(double tanBeta, double muHopper) => 1 - (0.2 / (1 + (tanBeta / muHopper)));

    /// <summary>
    /// Integrates the slice equation of a converging hopper downward from the transition (x up from
    /// the apex): d(A·p_v)/dx = F·p_v·U·(tanβ + μ_h) − γ·A [D, after Walker 1966], carrying the
    /// vertical force the walls take and the weight of the hopper contents along as states.
    /// </summary>
    public static HopperProfile Hopper(SiloShape shape, double unitWeightKnM3, double muHopper, double topVerticalKPa, double topXM)
    {
        if (shape.HopperShape == SiloWatch.Plant.HopperShape.Flat || topXM <= shape.HopperApexToOutletM)
        {
            return HopperProfile.None;
        }

        var f = HopperPressureRatio(shape.HopperTanBeta, muHopper);
        var lift = shape.HopperTanBeta + muHopper;
        var exponent = shape.HopperShape == SiloWatch.Plant.HopperShape.Wedge ? 1.0 : 2.0;
        var steps = Math.Max(16, (int)Math.Ceiling((topXM - shape.HopperApexToOutletM) / StepM));
        var rows = Rk4.Integrate(
            (x, y, d) =>
            {
                var a = shape.HopperArea(x);
                var u = shape.HopperPerimeter(x);
                var wall = f * y[0] * u * lift;
                // dp/dx = p·(F·U·(tanβ+μ)/A − A'/A) − γ, with A'/A = exponent/x.
                d[0] = (wall / a) - (exponent * y[0] / x) - unitWeightKnM3;
                d[1] = -wall;
                d[2] = -unitWeightKnM3 * a;
            },
            [topVerticalKPa, 0.0, 0.0],
            topXM,
            shape.HopperApexToOutletM,
            steps);
        var last = rows.AsSpan(rows.Length - 3);
        var outletArea = shape.HopperArea(shape.HopperApexToOutletM);
        var outletPv = Math.Max(0, last[0]);
        return new HopperProfile(
            topVerticalKPa,
            outletPv,
            ContentsWeightKn: last[2],
            WallVerticalForceKn: last[1],
            OutletForceKn: outletArea * outletPv,
            TransitionForceKn: shape.HopperArea(topXM) * topVerticalKPa);
    }
}
