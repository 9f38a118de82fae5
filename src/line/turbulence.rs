//! The linearised turbulent-friction correction for a line with turbulent
//! mean flow (methods.md §2.5).
//!
//! The laminar model underestimates the damping of a line whose mean flow is
//! turbulent (Reynolds number Re = ūD/ν above about 2300). The linearised
//! friction of the impedance method (Wylie & Streeter, *Fluid Transients in
//! Systems*, 1993; Chaudhry, *Applied Hydraulic Transients*, 2014) adds the
//! excess *incremental* steady resistance to the laminar series impedance:
//!
//! ```text
//! Z'(ω) = Z'_laminar(ω) + ΔR',     ΔR' = R'_t − R'_lam
//! R'_t  = d(Δp/L)/dQ at Q̄ = (2 + d ln f_D/d ln Re) (Δp/L)/Q̄
//! Δp/L  = f_D ρ ū²/(2D),  Blasius (1913) smooth pipe: f_D = 0.3164 Re^{−1/4}  ⇒  R'_t = 1.75 (Δp/L)/Q̄
//! R'_lam = 8μ/(πr⁴)  (Hagen–Poiseuille)
//! ```
//!
//! Below the transition the correction is zero. Blasius holds for
//! 4e3 ≲ Re ≲ 1e5; between 2300 and 4000 (transition) it is used as well, as
//! an estimate. A frequency-independent ΔR' overstates the damping at high
//! frequency, where the oscillating boundary layer is thinner than the
//! turbulent core (Vardy & Brown 2003); mean-flow convection (Mach ≈ 0.01) is
//! neglected.

/// Reynolds number above which the mean flow is taken as turbulent.
pub const TRANSITION_REYNOLDS: f64 = 2300.0;

/// Upper end of the Blasius friction law's range.
pub const BLASIUS_MAX_REYNOLDS: f64 = 1e5;

/// Reynolds number of a mean flow Q in a bore of radius r: Re = ūD/ν = 2|Q|/(πrν).
pub fn reynolds_number(flow_m3_s: f64, radius_m: f64, kinematic_viscosity_m2_s: f64) -> f64 {
    2.0 * flow_m3_s.abs() / (std::f64::consts::PI * radius_m * kinematic_viscosity_m2_s)
}

/// Blasius's smooth-pipe Darcy friction factor f_D = 0.3164 Re^{−1/4}.
pub fn blasius_friction_factor(reynolds: f64) -> f64 {
    0.3164 * reynolds.powf(-0.25)
}

/// The excess resistance per unit length ΔR' = R'_t − R'_lam (Pa·s/m⁴) that
/// a turbulent mean flow adds to the laminar model; zero at or below
/// [`TRANSITION_REYNOLDS`].
pub fn excess_resistance_per_m(
    flow_m3_s: f64,
    radius_m: f64,
    density_kg_m3: f64,
    kinematic_viscosity_m2_s: f64,
) -> f64 {
    let re = reynolds_number(flow_m3_s, radius_m, kinematic_viscosity_m2_s);
    if re.is_nan() || re <= TRANSITION_REYNOLDS {
        return 0.0;
    }
    let q = flow_m3_s.abs();
    let area = std::f64::consts::PI * radius_m * radius_m;
    let u = q / area;
    let gradient = blasius_friction_factor(re) * density_kg_m3 * u * u / (4.0 * radius_m);
    let turbulent = 1.75 * gradient / q;
    let laminar =
        8.0 * density_kg_m3 * kinematic_viscosity_m2_s / (std::f64::consts::PI * radius_m.powi(4));
    (turbulent - laminar).max(0.0)
}

#[cfg(test)]
mod tests {
    use super::*;

    // methods.md §2.5 worked example, recomputed with mpmath
    // (tests/oracles/fluid_refs.py [6]): D = 10 mm, Q = 60 L/min, ν = 32e-6,
    // ρ = 870 → Re = 3978.873577297383, ΔR' = 3.782059819590797e8 Pa·s/m⁴.
    #[test]
    fn worked_example() {
        let re = reynolds_number(1e-3, 5e-3, 32e-6);
        assert!((re - 3978.873577297383).abs() < 1e-9);
        let dr = excess_resistance_per_m(1e-3, 5e-3, 870.0, 32e-6);
        assert!((dr - 3.782059819590797e8).abs() < 1e-12 * dr, "{dr}");
        // the sign of the mean flow does not matter
        assert_eq!(dr, excess_resistance_per_m(-1e-3, 5e-3, 870.0, 32e-6));
    }
}
