namespace SiloWatch.Simulator.Physics;

/// <summary>The stored solid's parameters as the simulator uses them (one consistent set, not design extremes).</summary>
public sealed record SolidParameters(double UnitWeightKnM3, double K, double WallFriction, double HopperWallFriction, double InternalFriction)
{
    public double DensityKgM3 => UnitWeightKnM3 * 1000 / StandardGravity;

    /// <summary>g_n = 9.80665 m/s² [V: CGPM 1901].</summary>
    public const double StandardGravity = 9.80665;
}

/// <summary>An eccentric flow channel against the wall (EN 1991-4 §5.2.4 structure [M]).</summary>
public sealed record FlowChannel(double AzimuthDeg, double RadiusRatio, double EccentricityRatio)
{
    /// <summary>
    /// Contact half-angle θ_c on the wall, area and perimeters of the channel: the part of a circle
    /// of radius r_c centred e_c from the axis that lies inside the silo circle [D: plane geometry].
    /// </summary>
    public (double HalfAngleRad, double AreaM2, double WallArcM, double InterfaceArcM) Geometry(double radiusM)
    {
        var r = RadiusRatio * radiusM;
        var d = EccentricityRatio * radiusM;
        var big = radiusM;
        if (d + r <= big)
        {
            // The channel does not reach the wall: treat it as touching at one point.
            d = big - r + 1e-6;
        }

        var cosWall = Math.Clamp(((big * big) + (d * d) - (r * r)) / (2 * big * d), -1, 1);
        var cosChannel = Math.Clamp(((d * d) + (r * r) - (big * big)) / (2 * d * r), -1, 1);
        var wallHalf = Math.Acos(cosWall);
        var channelHalf = Math.Acos(cosChannel);
        var kite = 0.5 * Math.Sqrt(Math.Max(0, (-d + r + big) * (d + r - big) * (d - r + big) * (d + r + big)));
        var area = (r * r * channelHalf) + (big * big * wallHalf) - kite;
        return (wallHalf, area, 2 * wallHalf * big, 2 * channelHalf * r);
    }

    /// <summary>z_oc = A_c / (K·(μ·U_wc + μ_i·U_sc)) [M: EN 1991-4 eq. 5.61 structure, from memory].</summary>
    public double CharacteristicDepthM(double radiusM, SolidParameters solid)
    {
        var (_, area, wallArc, interfaceArc) = Geometry(radiusM);
        return area / (solid.K * ((solid.WallFriction * wallArc) + (solid.InternalFriction * interfaceArc)));
    }
}

/// <summary>What acts on one silo at one instant: integrated profiles, floor and hopper forces.</summary>
public sealed record SiloLoadState(
    FillSurface Surface,
    double SurchargeKPa,
    VerticalProfile Filling,
    VerticalProfile? Channel,
    double ChannelHalfAngleRad,
    HopperProfile Hopper,
    double VerticalPartWeightKn,
    double WallFrictionKn,
    double FloorForceKn,
    double ContentsWeightKn,
    double PressureFactor,
    double FrictionFactor)
{
    /// <summary>Cosine coefficients (n = 0..<see cref="SiloLoads.SpreadHarmonics"/>) of the channel zone and of the zones beside it.</summary>
    public double[] InsideHarmonics { get; init; } = [];

    public double[] BesideHarmonics { get; init; } = [];

    /// <summary>The load the floor or hopper passes to its supports (without the structure), kN.</summary>
    public double BaseLoadKn => Hopper.TotalKn > 0 || Surface.InHopper ? Hopper.TotalKn : FloorForceKn;
}

/// <summary>Pure computation of a silo's loads from its contents: the slice equations integrated numerically.</summary>
public static class SiloLoads
{
    /// <param name="dischargeFactor">0 at rest, 1 in full discharge (pressures ramp between).</param>
    public static SiloLoadState Compute(SiloShape shape, SolidParameters solid, double volumeM3, double dischargeFactor, double ch, double cw, FlowChannel? channel)
    {
        var surface = shape.SurfaceFor(volumeM3);
        var gamma = solid.UnitWeightKnM3;
        var pressureFactor = 1 + ((ch - 1) * dischargeFactor);
        var frictionFactor = 1 + ((cw - 1) * dischargeFactor);
        if (surface.InHopper)
        {
            var x = shape.HopperApexToTransitionM + surface.ContactHeightM;
            var hopper = SliceEquations.Hopper(shape, gamma, solid.HopperWallFriction, 0, x);
            return new SiloLoadState(surface, 0, VerticalProfile.Empty, null, 0, hopper, 0, 0, 0, gamma * volumeM3, pressureFactor, frictionFactor);
        }

        // The heap is a surcharge on the contact plane: its weight spread over the section, γ·h_heap/3 [D].
        var q0 = gamma * surface.HeapHeightM / 3;
        var filling = SliceEquations.Vertical(gamma, solid.K * solid.WallFriction, shape.HydraulicRadiusM, q0, surface.ContactHeightM);
        VerticalProfile? channelProfile = null;
        double halfAngle = 0;
        if (channel is not null && dischargeFactor > 0 && shape.Section == SiloWatch.Plant.SectionShape.Circular)
        {
            var zoc = channel.CharacteristicDepthM(shape.HalfSpanM, solid);
            halfAngle = channel.Geometry(shape.HalfSpanM).HalfAngleRad;
            // Same slice equation inside the channel with its own z_oc: decay 1/z_oc, friction μ·K·p_v.
            var kMu = solid.K * solid.WallFriction;
            channelProfile = SliceEquations.Vertical(gamma, kMu, kMu * zoc, q0, surface.ContactHeightM);
        }

        var verticalWeight = gamma * shape.AreaM2 * (surface.ContactHeightM + (surface.HeapHeightM / 3));
        // In discharge the wall takes C_w times the filling friction; the floor gets the rest (equilibrium).
        var wallFriction = shape.PerimeterM * filling.BottomWallFrictionKnPerM * frictionFactor;
        var floor = Math.Max(0, (shape.AreaM2 * filling.BottomVerticalKPa) - (shape.PerimeterM * filling.BottomWallFrictionKnPerM * (frictionFactor - 1)));
        var hopperProfile = shape.HopperShape == SiloWatch.Plant.HopperShape.Flat
            ? HopperProfile.None
            : SliceEquations.Hopper(shape, gamma, solid.HopperWallFriction, floor / shape.AreaM2, shape.HopperApexToTransitionM);
        var (inside, beside) = channelProfile is null ? ([], []) : Harmonics(halfAngle);
        return new SiloLoadState(surface, q0, filling, channelProfile, halfAngle, hopperProfile, verticalWeight, wallFriction, floor,
            gamma * volumeM3, pressureFactor, frictionFactor)
        {
            InsideHarmonics = inside,
            BesideHarmonics = beside,
        };
    }

    /// <summary>
    /// Highest circumferential harmonic of the channel pattern that reaches the gauges. The shell spreads a
    /// local load round the ring: higher harmonics decay within a short height (shell theory), and keeping
    /// n ≤ 3 also stops a ring of 6 gauges aliasing n = 5, 7 into n = 1. The harmonics are tapered with
    /// Fejér weights (a smoothing kernel, no overshoot). A modelling choice, not a code value.
    /// </summary>
    public const int SpreadHarmonics = 3;

    /// <summary>Cosine series of the zone weights (the pattern is symmetric about the channel axis), by quadrature.</summary>
    public static (double[] Inside, double[] Beside) Harmonics(double halfAngleRad) =>
        HarmonicsCache.GetOrAdd(halfAngleRad, ComputeHarmonics);

    private static readonly System.Collections.Concurrent.ConcurrentDictionary<double, (double[], double[])> HarmonicsCache = new();

    private static (double[] Inside, double[] Beside) ComputeHarmonics(double halfAngleRad)
    {
        const int points = 720;
        var inside = new double[SpreadHarmonics + 1];
        var beside = new double[SpreadHarmonics + 1];
        for (var k = 0; k < points; k++)
        {
            var d = (k + 0.5) * 2 * Math.PI / points;
            var (wi, wb) = ChannelWeights(d, halfAngleRad);
            for (var n = 0; n <= SpreadHarmonics; n++)
            {
                // Fejér weights 1 − n/(N+1): a positive smoothing kernel, so the spread pattern does not overshoot.
                var basis = Math.Cos(n * d) * (n == 0 ? 1.0 : 2.0) / points * (1 - (n / (SpreadHarmonics + 1.0)));
                inside[n] += wi * basis;
                beside[n] += wb * basis;
            }
        }

        return (inside, beside);
    }

    private static double Series(double[] c, double delta)
    {
        var sum = 0.0;
        for (var n = 0; n < c.Length; n++)
        {
            sum += c[n] * Math.Cos(n * delta);
        }

        return sum;
    }

    /// <summary>Weights of the channel zone and of the zones beside it at a ring angle Δ from the channel axis (smoothed edges).</summary>
    public static (double Inside, double Beside) ChannelWeights(double deltaRad, double halfAngleRad)
    {
        var d = Math.Abs(Math.IEEERemainder(deltaRad, 2 * Math.PI));
        var edge = Math.Min(5 * Math.PI / 180, halfAngleRad / 2);
        var inside = Window(d, halfAngleRad, edge);
        var beside = Window(d, 2 * halfAngleRad, edge) - inside;
        return (inside, beside);
    }

    private static double Window(double d, double half, double edge)
    {
        if (d <= half - edge)
        {
            return 1;
        }

        if (d >= half + edge)
        {
            return 0;
        }

        return 0.5 * (1 + Math.Cos(Math.PI * (d - (half - edge)) / (2 * edge)));
    }

    // How strong the eccentric pattern is, and why the demo's A1/A0 placeholder follows it (not the reverse):
    // the pattern is local. Inside the channel the load falls, beside it (p_hae = 2·p_hf − p_hce) it rises, so round
    // a ring the two nearly balance and the first harmonic carries a small part of it: with the channel of EN 1991-4's
    // largest size against the wall (r_c = 0.5·r [M: the standard asks for r_c = 0.5, 0.35, 0.25·r, from memory]) S1's
    // rings read A1/A0 ≈ 0.13-0.15, and even a channel as wide as the silo's radius gives only ≈ 0.2. That is also the
    // order of the design allowance: EN 1991-4's discharge patch on a thin circular wall varies as cos θ with
    // C_pe = 0.42·C_op·(1 + 2E²)·(1 − e^(−1.5(h_c/d_c − 1))) [M?], for S1 (wheat, C_op = 0.5 [M], h_c/d_c = 3,
    // concentric E = 0) C_pe ≈ 0.20 over a band s = π·d_c/16 ≈ 1.2 m; its overturning moment at S1's base ring,
    // M ≈ π·r·p_pe·s·(lever ≈ 7.5 m), is an axial first harmonic M/(π·r²) ≈ 0.12 of the mean n_z [D, estimate]. A
    // limit of 0.35 (the first placeholder) would flag nothing a flow channel can do; the pure cos pattern the old
    // detection generator injected reached any setpoint by construction. The physics here is kept as it was (it
    // spreads the channel's friction deficit round the ring, which if anything overstates n = 1 against EN's local
    // balance); the demo plant's placeholder is 0.10. The real limit is the structural engineer's.

    /// <summary>
    /// Normal wall pressure and accumulated wall friction at a point of the ring, depth z below the
    /// contact: Janssen with discharge factors, and with an eccentric channel p_hce inside and
    /// p_hae = 2·p_hf − p_hce beside it [M: EN 1991-4 §5.2.4.3]; the friction deficit of the channel is carried
    /// by the rest of the ring. Both as the gauges see them (harmonics n ≤ 3).
    /// </summary>
    public static (double PressureKPa, double FrictionKnPerM) WallAt(SiloLoadState s, SolidParameters solid, double depthM, double deltaFromChannelRad, double channelStrength)
    {
        if (depthM <= 0)
        {
            return (0, 0);
        }

        var pvf = s.Filling.VerticalAt(depthM);
        var nzf = s.Filling.WallFrictionAt(depthM);
        var pv = pvf;
        var nz = nzf;
        if (s.Channel is not null && channelStrength > 0)
        {
            var inside = Series(s.InsideHarmonics, deltaFromChannelRad);
            var beside = Series(s.BesideHarmonics, deltaFromChannelRad);
            var pvc = s.Channel.VerticalAt(depthM);
            var nzc = s.Channel.WallFrictionAt(depthM);
            pv += channelStrength * ((inside * (pvc - pvf)) + (beside * (pvf - pvc)));

            // Friction: the flowing channel hangs less on the wall; the static solid round the rest of the ring
            // takes the difference, so the total down the wall (and the floor load) is unchanged [D: vertical equilibrium].
            var share = s.InsideHarmonics[0] / (1 - s.InsideHarmonics[0]);
            nz += channelStrength * (nzc - nzf) * (inside - ((1 - inside) * share));
        }

        return (s.PressureFactor * solid.K * pv, s.FrictionFactor * nz);
    }
}
