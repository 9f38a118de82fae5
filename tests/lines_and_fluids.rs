//! Checks of the fluid-property models, thick walls, hoses, the turbulent
//! mean-flow correction, the mean-flow split and the ripple profile, against
//! published formulas, worked examples and values computed with mpmath/scipy.
//!
//! Reference values marked "oracle [n]" were computed by
//! `tests/oracles/fluid_refs.py` (mpmath 1.3.0 at mp.dps = 30; the mpmath
//! call is named in its section [n] and beside each table here) and pasted
//! with all the digits it printed.

#![allow(clippy::excessive_precision)]

use ripline::C64;
use ripline::analysis::profile::ripple_profile;
use ripline::analysis::ripple::tap_pressure;
use ripline::circuit::{Circuit, Node, Tap, TapLocation};
use ripline::elements::{Connection, Element, ElementKind, Hose, LoadValve, Tube, Volume};
use ripline::fluid::Fluid;
use ripline::hose::{HoseConstruction, RetardationTerm, ViscoelasticWall};
use ripline::line::turbulence::{TRANSITION_REYNOLDS, reynolds_number};
use ripline::line::{Line, LineModel, LineProperties, MeanFlow};
use ripline::meanflow::{mean_flows, resolve_line_mean_flows};
use ripline::network::Plan;
use ripline::oil::{self, Grade, OilData, celsius};
use ripline::source::{FlowHarmonic, FlowRipple, Pump, SourceImpedance};
use ripline::wall::Wall;
use std::f64::consts::PI;

fn rel(a: C64, b: C64) -> f64 {
    (a - b).norm() / b.norm()
}

fn omega(f: f64) -> f64 {
    2.0 * PI * f
}

// ---------------------------------------------------------------------------
// Viscosity: Walther equation (ASTM D341 form)
// ---------------------------------------------------------------------------

/// ASTM D341 / Walther through the two reference points of ISO VG 46
/// (46 cSt at 40 °C by the grade's definition, ISO 3448; 6.8 cSt at 100 °C,
/// a typical VI ≈ 100 value): the worked example of methods.md §1.3
/// (A = 9.41799, B = 3.68444; ν = 133.8 / 29.97 / 20.62 / 11.10 cSt at
/// 20 / 50 / 60 / 80 °C), recomputed by oracle [1] with
/// `10**(10**(A - B*mp.log10(T))) - 0.7` and cross-checked with
/// `scipy.optimize.brentq` (agreement ≤ 1.4e-14).
#[test]
fn walther_viscosity_of_vg46() {
    let w = Grade::Vg46.typical().viscosity;
    assert!((w.a - 9.417992554330885).abs() < 1e-12, "A = {}", w.a);
    assert!((w.b - 3.684441497537861).abs() < 1e-12, "B = {}", w.b);
    let cases = [
        (20.0, 1.338381805212727e2, 133.8),
        (50.0, 2.997298983930994e1, 29.97),
        (60.0, 2.062274755695594e1, 20.62),
        (80.0, 1.110261062512687e1, 11.10),
    ];
    for (t, mp, printed) in cases {
        let nu = w.viscosity_m2_s(celsius(t)) * 1e6;
        assert!((nu - mp).abs() < 1e-11 * mp, "{t} °C: {nu} cSt");
        // methods.md prints 4 significant digits
        assert!((nu - printed).abs() < 5e-4 * printed, "{t} °C: {nu} cSt");
    }
}

// ---------------------------------------------------------------------------
// Bulk modulus and density against pressure: Hayward's secant law
// ---------------------------------------------------------------------------

/// Hayward (1967, Br. J. Appl. Phys. 18, 965): the secant bulk modulus is
/// linear in pressure, p V0/(V0 − V) = K0 + m p. Oracle [2] evaluates the
/// tangent modulus −V dp/dV both in closed form and with `mp.diff` (agreement
/// ≤ 1.5e-31) for K0 = 1.62e9/1.15 Pa (isothermal, from the isentropic
/// 1.62 GPa with γ = 1.15), m = 5.6, at 40 °C.
#[test]
fn bulk_modulus_against_pressure_follows_haywards_secant_law() {
    let oil = OilData::MINERAL_TYPICAL;
    let t = celsius(40.0);
    // (gauge Pa, isentropic tangent modulus Pa, V/V0) — oracle [2]
    let cases = [
        (0.0, 1.620000000000000e9, 1.0),
        (1e7, 1.739402938271605e9, 9.931726430776538e-1),
        (2e7, 1.863011753086420e9, 9.868481244281793e-1),
        (3.5e7, 2.056310993827160e9, 9.781890105126260e-1),
    ];
    for (p, b, v) in cases {
        let got = oil.bulk_modulus_pa(t, p);
        assert!((got - b).abs() < 1e-12 * b, "{p} Pa: {got}");
        assert!((oil.volume_ratio(t, p) - v).abs() < 1e-14, "{p} Pa");
        // Hayward's published form itself: the secant modulus is K0 + m p.
        if p > 0.0 {
            let secant = p / (1.0 - oil.volume_ratio(t, p));
            let k0 = 1.62e9 / 1.15;
            assert!((secant - (k0 + 5.6 * p)).abs() < 1e-9 * secant);
        }
    }
    // Near atmosphere the tangent modulus rises by 2m − 1 ≈ 10 per unit
    // pressure, the K1 ≈ 10–11 quoted for mineral oils (methods.md §1.2,
    // recalled from memory there).
    let slope =
        (oil.isothermal_bulk_modulus_pa(t, 1e5) - oil.isothermal_bulk_modulus_pa(t, 0.0)) / 1e5;
    assert!((10.0..11.0).contains(&slope), "{slope}");
    // Density rises with pressure as 1/(V/V0) and falls with temperature as
    // 1/(1 + α_T ΔT) (common practice): ρ(40 °C) = 875/(1 + 6.5e-4·25).
    let rho40 = Grade::Vg46.typical().density_kg_m3(t, 0.0);
    assert!((rho40 - 875.0 / 1.01625).abs() < 1e-9, "{rho40}");
    let rho40_350 = Grade::Vg46.typical().density_kg_m3(t, 3.5e7);
    assert!((rho40_350 - rho40 / 9.781890105126260e-1).abs() < 1e-9);
}

// ---------------------------------------------------------------------------
// Free air: Merritt's mixture rule
// ---------------------------------------------------------------------------

/// Effective bulk modulus of oil with 1 % free air at atmospheric pressure
/// (Merritt 1967 mixture rule; methods.md §1.4 worked table: B/B_l =
/// 0.0328 / 0.175 / 0.506 / 0.957 / 0.989 / 0.997 at 2 / 5 / 11 / 51 / 101 /
/// 201 bar absolute, B_l = 1.62 GPa, κ = 1.4). Oracle [3] recomputes it with
/// mpmath (`1/((1-a)/B_l + a/(kappa*p))`) and cross-checks it with a direct
/// bookkeeping of the two volumes (agreement 1.9e-31).
#[test]
fn free_air_lowers_the_bulk_modulus() {
    let cases = [
        (2e5, 3.283843821545696e-2, 0.0328),
        (5e5, 1.746556277399250e-1, 0.175),
        (1.1e6, 5.058332858724885e-1, 0.506),
        (5.1e6, 9.566417366595629e-1, 0.957),
        (1.01e7, 9.886235889191104e-1, 0.989),
        (2.01e7, 9.971279307627373e-1, 0.997),
    ];
    for (p_abs, ratio, printed) in cases {
        let b = oil::bulk_modulus_with_air(1.62e9, 0.01, p_abs, 1.4) / 1.62e9;
        assert!((b - ratio).abs() < 1e-12 * ratio, "{p_abs} Pa: {b}");
        assert!((b - printed).abs() <= 0.0005 + 1e-12, "{p_abs} Pa: {b}");
    }
}

/// A fluid section with a grade, temperature, pressure and air gives the
/// product of the models above (the checks of the pieces are above).
#[test]
fn a_grade_at_an_operating_point_through_the_circuit_file() {
    let yaml = |fluid: &str| {
        format!(
            "fluid: {fluid}\n\
             pump: {{node: a, speed: 1500 rpm, pumping_elements: 9,\n\
             \x20 flow_ripple: [{{harmonic: 1, amplitude: 1 L/min}}], source_impedance: {{volume: 0.1 L}}}}\n\
             elements:\n\
             \x20 - {{name: l, kind: tube, from: a, to: b, length: 1 m, bore: 10 mm, rigid: true}}\n\
             \x20 - {{name: t, kind: tank, at: b}}\n"
        )
    };
    let c = ripline::io::parse_circuit(
        &yaml("{grade: VG 46, temperature: 50 degC, pressure: 100 bar, air_content: 0.5 %}"),
        "t.yaml",
    )
    .unwrap();
    let data = Grade::Vg46.typical();
    let (t, p) = (celsius(50.0), 1e7);
    let abs = p + oil::ATMOSPHERIC_PA;
    let alpha = oil::air_fraction(0.005, abs);
    let want_b = oil::bulk_modulus_with_air(data.bulk_modulus_pa(t, p), 0.005, abs, 1.4);
    assert!((c.fluid.bulk_modulus_pa - want_b).abs() < 1e-6);
    assert!((c.fluid.density_kg_m3 - data.density_kg_m3(t, p) * (1.0 - alpha)).abs() < 1e-9);
    assert!((c.fluid.kinematic_viscosity_m2_s * 1e6 - 2.997298983930994e1).abs() < 1e-10);
    // 40 °C → 50 °C lowers B_s by e^{−0.055} (β = 0.0055 1/K): 1.62 → 1.533 GPa,
    // methods.md §1.6's 1.53 GPa at 50 °C.
    assert!((data.bulk_modulus_pa(t, 0.0) / 1e9 - 1.53).abs() < 0.005);
    // Explicit values override the grade's.
    let c = ripline::io::parse_circuit(
        &yaml("{grade: VG 46, temperature: 50 degC, viscosity: 20 cSt, density: 850}"),
        "t.yaml",
    )
    .unwrap();
    assert!((c.fluid.kinematic_viscosity_m2_s - 20e-6).abs() < 1e-18);
    assert_eq!(c.fluid.density_kg_m3, 850.0);
    assert_eq!(c.fluid.bulk_modulus_pa, data.bulk_modulus_pa(t, 0.0));
    // Two viscosity points of the user's own oil replace the grade's.
    let c = ripline::io::parse_circuit(
        &yaml(
            "{temperature: 122 degF, density: 860, bulk_modulus: 1.5 GPa, viscosity_points: \
             [{temperature: 40 degC, viscosity: 46 cSt}, {temperature: 373.15 K, viscosity: 6.8 cSt}]}",
        ),
        "t.yaml",
    )
    .unwrap();
    assert!((c.fluid.kinematic_viscosity_m2_s * 1e6 - 2.997298983930994e1).abs() < 1e-10);
}

// ---------------------------------------------------------------------------
// Thick (Lamé) and thin (Korteweg) walls
// ---------------------------------------------------------------------------

/// The Lamé thick-cylinder compliance tends to Korteweg's thin-wall D/(Ee) as
/// the wall gets thin: thick/thin = 1 + (e/D)(1 + 2ν) + O((e/D)²) (expansion
/// of the two formulas, wall.rs). Oracle [4] values (mpmath, exact
/// arithmetic on the formulas) for D = 10 mm, E = 206 GPa, ν = 0.3; the
/// D/e = 5 case is methods.md §1.5's worked one (thick 3.285e-11,
/// c0 = 1336.6 m/s with B = 1.62 GPa, ρ = 861).
#[test]
fn thick_wall_converges_to_thin_wall() {
    let cases = [
        (2e-3, 1.353333333333333),
        (1e-3, 1.169090909090909),
        (1e-4, 1.016099009900990),
        (1e-5, 1.001600999000999),
    ];
    for (e, ratio) in cases {
        let thin = Wall::Elastic {
            thickness_m: e,
            youngs_modulus_pa: 206e9,
        };
        let thick = Wall::ThickElastic {
            thickness_m: e,
            youngs_modulus_pa: 206e9,
            poisson_ratio: 0.3,
        };
        let r = thick.compliance_per_pa(0.01) / thin.compliance_per_pa(0.01);
        assert!((r - ratio).abs() < 1e-12, "e = {e}: {r}");
        let lead = 1.0 + e / 0.01 * 1.6;
        assert!((r - lead).abs() < 2.0 * (e / 0.01).powi(2), "e = {e}");
    }
    let thick = Wall::ThickElastic {
        thickness_m: 2e-3,
        youngs_modulus_pa: 206e9,
        poisson_ratio: 0.3,
    };
    let c = (thick.effective_bulk_modulus(1.62e9, 0.01) / 861.0).sqrt();
    assert!((c - 1.336588450088314e3).abs() < 1e-9, "{c}");
}

/// The circuit file uses the thick form by default and takes the material's
/// Poisson's ratio; `wall_model: thin` keeps Korteweg.
#[test]
fn tubes_default_to_the_thick_wall() {
    let text = |extra: &str| {
        format!(
            "fluid: {{density: 861, bulk_modulus: 1.62 GPa, viscosity: 46 cSt}}\n\
             pump: {{node: a, speed: 1500 rpm, pumping_elements: 9,\n\
             \x20 flow_ripple: [{{harmonic: 1, amplitude: 1 L/min}}], source_impedance: {{volume: 0.1 L}}}}\n\
             elements:\n\
             \x20 - {{name: l, kind: tube, from: a, to: b, length: 1 m, bore: 10 mm, wall: 2 mm, material: steel{extra}}}\n\
             \x20 - {{name: t, kind: tank, at: b}}\n"
        )
    };
    let speed = |extra: &str| {
        let c = ripline::io::parse_circuit(&text(extra), "t.yaml").unwrap();
        c.elements[0]
            .kind
            .line()
            .unwrap()
            .properties
            .wave_speed_m_s()
    };
    // methods.md §1.5: 1336.6 m/s thick, 1345.5 m/s thin (oracle [4] and
    // line_refs.py [6]).
    assert!((speed("") - 1.336588450088314e3).abs() < 1e-9);
    assert!((speed(", wall_model: thin") - 1345.492273234807).abs() < 1e-9);
}

// ---------------------------------------------------------------------------
// Hoses
// ---------------------------------------------------------------------------

fn hose_line(wall: ViscoelasticWall, model: LineModel, fluid_b: f64) -> LineProperties {
    LineProperties {
        radius_m: 5e-3,
        density_kg_m3: 870.0,
        kinematic_viscosity_m2_s: 32e-6,
        effective_bulk_modulus_pa: fluid_b,
        model,
        viscoelastic_wall: Some(wall),
        mean_flow: MeanFlow::Unknown,
    }
}

fn rigid_line(bulk: f64, model: LineModel) -> LineProperties {
    LineProperties {
        radius_m: 5e-3,
        density_kg_m3: 870.0,
        kinematic_viscosity_m2_s: 32e-6,
        effective_bulk_modulus_pa: bulk,
        model,
        viscoelastic_wall: None,
        mean_flow: MeanFlow::Unknown,
    }
}

/// A hose with zero loss factor is a line with a real, constant effective
/// modulus ρc²: its Γ and Zc equal those of a tube of the same wave speed, for
/// the lossless and the laminar friction models, at every frequency
/// (oracle [5], last lines: mpmath agreement 0.0 at 500 Hz).
#[test]
fn hose_with_zero_loss_is_a_line_of_the_same_wave_speed() {
    let c = 1050.0;
    let wall = ViscoelasticWall::from_wave_speed(c, 0.0, 200.0, 870.0, 1.6e9).unwrap();
    assert!(wall.is_lossless());
    for model in [LineModel::Lossless, LineModel::Laminar] {
        let hose = hose_line(wall, model, 1.6e9);
        let tube = rigid_line(870.0 * c * c, model);
        assert!((hose.wave_speed_m_s() - c).abs() < 1e-9);
        for f in [1.0, 37.0, 225.0, 1000.0, 5000.0] {
            let (ph, pt) = (hose.propagation(omega(f)), tube.propagation(omega(f)));
            assert!(rel(ph.gamma, pt.gamma) < 1e-12, "{model:?} {f} Hz");
            assert!(rel(ph.zc, pt.zc) < 1e-12, "{model:?} {f} Hz");
        }
    }
    // A lossless hose resonates where a lossless tube does: a quarter-wave
    // line driven by an ideal flow source has Zin = jZ0 tan(kL) (Kinsler et
    // al., Fundamentals of Acoustics, 4th ed., §10.3); pole at c/4L.
    let line = Line {
        properties: hose_line(wall, LineModel::Lossless, 1.6e9),
        length_m: 2.0,
    };
    let mut circuit = small_circuit(
        vec![
            (
                ElementKind::Hose(Hose {
                    line,
                    construction: None,
                    pressure: None,
                }),
                Connection::Series { a: 0, b: 1 },
            ),
            (ElementKind::Tank, Connection::Shunt { at: 1 }),
        ],
        2,
    );
    // an ideal flow source: no internal volume
    circuit.pumps[0].source_impedance = SourceImpedance::Volume {
        capacitance_m3_pa: 0.0,
        leakage_resistance_pa_s_m3: None,
    };
    let plan = Plan::compile(&circuit).unwrap();
    let mut ws = plan.workspace();
    let z0 = 870.0 * c / (PI * 25e-6);
    for f in [40.0, 100.0, 200.0] {
        let z = plan
            .solve(f, &[(0, C64::new(1.0, 0.0))], &mut ws)
            .unwrap()
            .node_pressures[0];
        let kl = omega(f) * 2.0 / c;
        assert!(rel(z, C64::new(0.0, z0 * kl.tan())) < 1e-9, "{f} Hz");
    }
    assert!(
        plan.solve(c / 8.0, &[(0, C64::new(1.0, 0.0))], &mut ws)
            .is_err()
    );
}

/// The constant-loss hose against oracle [5] (mpmath, `G = mp.sqrt(Zp*Yp)`,
/// Zc = Zp/G, J_w = J_ref (f/f_ref)^(-2g)), r = 5 mm, ν = 32e-6, ρ = 870,
/// B_fluid = 1.6 GPa, c_ref = √(1e9/870), η = 0.1, f_ref = 225 Hz. At f_ref it
/// must equal methods.md §3's worked example (hysteretic B_h(1 + jη)):
/// Γ = 0.096079 + j1.340193 1/m, Zc = 1.215675e10 + j3.417027e8.
#[test]
fn constant_loss_hose_against_mpmath_and_the_worked_example() {
    let c_ref = (1e9f64 / 870.0).sqrt();
    let wall = ViscoelasticWall::from_wave_speed(c_ref, 0.1, 225.0, 870.0, 1.6e9).unwrap();
    let hose = hose_line(wall, LineModel::Laminar, 1.6e9);
    // (f, Γ, Zc, B*) — oracle [5]
    let refs = [
        (
            10.0,
            C64::new(1.288516711143946e-2, 7.140038431989995e-2),
            C64::new(1.171888036934740e10, -5.231847602803645e8),
            C64::new(7.907187022408776e8, 1.065362516273067e8),
        ),
        (
            100.0,
            C64::new(5.394008047646735e-2, 6.175688877763593e-1),
            C64::new(1.196425938576236e10, 2.539949843887268e8),
            C64::new(9.470296697544964e8, 1.030120006662083e8),
        ),
        (
            225.0,
            C64::new(9.607898011363055e-2, 1.340192710652960e0),
            C64::new(1.215674625342375e10, 3.417026832851042e8),
            C64::new(1e9, 1e8),
        ),
        (
            1000.0,
            C64::new(2.964165258651325e-1, 5.646301212695230e0),
            C64::new(1.255423434909445e10, 4.026227622467043e8),
            C64::new(1.092367747015976e9, 9.253530801284244e7),
        ),
        (
            3000.0,
            C64::new(7.054943625916714e-1, 1.641607237599878e1),
            C64::new(1.285020029004410e10, 4.014098897576143e8),
            C64::new(1.155172545644932e9, 8.584460452443097e7),
        ),
    ];
    for (f, gamma, zc, bstar) in refs {
        let p = hose.propagation(omega(f));
        assert!(rel(p.gamma, gamma) < 1e-11, "Γ at {f} Hz: {}", p.gamma);
        assert!(rel(p.zc, zc) < 1e-11, "Zc at {f} Hz: {}", p.zc);
        assert!(rel(hose.compliance(omega(f)).inv(), bstar) < 1e-12);
    }
    let p = hose.propagation(omega(225.0));
    assert!((p.gamma.re - 0.096079).abs() < 5e-7 && (p.gamma.im - 1.340193).abs() < 5e-7);
    assert!((p.zc.re - 1.215675e10).abs() < 5e4 && (p.zc.im - 3.417027e8).abs() < 5e2);
}

/// Generalised Kelvin–Voigt wall (Tschoegl 1989): J_u = 1/4 GPa, terms
/// (1/6 GPa, 1 ms) and (1/20 GPa, 0.1 ms), same line and fluid; oracle [5b]
/// (mpmath, `Ju + sum(dJ/(1 + j*w*tau))`).
#[test]
fn kelvin_voigt_hose_against_mpmath() {
    let wall = ViscoelasticWall::kelvin_voigt(
        1.0 / 4e9,
        &[
            RetardationTerm {
                compliance_per_pa: 1.0 / 6e9,
                time_s: 1e-3,
            },
            RetardationTerm {
                compliance_per_pa: 1.0 / 20e9,
                time_s: 1e-4,
            },
        ],
    )
    .unwrap();
    let hose = hose_line(wall, LineModel::Laminar, 1.6e9);
    let refs = [
        (
            10.0,
            C64::new(4.660093065582394e-10, -1.074494324176653e-11),
            C64::new(7.868672144783846e-3, 6.723489424382365e-2),
        ),
        (
            225.0,
            C64::new(3.546018714072309e-10, -8.550669849944646e-11),
            C64::new(8.711528648782504e-2, 1.332858388906115e0),
        ),
        (
            1000.0,
            C64::new(2.899652605215545e-10, -4.839437819086070e-11),
            C64::new(2.074457231905580e-1, 5.662873457185097e0),
        ),
    ];
    for (f, jw, gamma) in refs {
        assert!(rel(wall.compliance(omega(f)), jw) < 1e-13, "{f} Hz");
        assert!(
            rel(hose.propagation(omega(f)).gamma, gamma) < 1e-11,
            "{f} Hz"
        );
    }
}

/// Every hose is passive: Re Γ ≥ 0, Re Zc > 0 and Re Y' = −ωA Im(1/B*) ≥ 0
/// at every frequency (methods.md §3: with e^{+jωt} passivity needs
/// Im(1/B*) ≤ 0).
#[test]
fn hoses_are_passive() {
    for c in HoseConstruction::ALL {
        for model in [LineModel::Lossless, LineModel::Laminar] {
            let hose = hose_line(c.wall(), model, 1.4e9);
            let mut f = 0.01;
            while f < 2e4 {
                let p = hose.propagation(omega(f));
                assert!(p.gamma.re > 0.0 && p.zc.re > 0.0, "{} {f} Hz", c.name());
                assert!(hose.compliance(omega(f)).im < 0.0);
                f *= 1.7;
            }
        }
        // the typical values hold in the reference oil at 200 Hz
        let (speed, eta) = c.typical();
        let b = hose_line(c.wall(), LineModel::Lossless, 1.6e9)
            .compliance(omega(200.0))
            .inv();
        assert!(((b.re / 870.0).sqrt() - speed).abs() < 1e-9 * speed);
        assert!((b.im / b.re - eta).abs() < 1e-12);
    }
}

// ---------------------------------------------------------------------------
// Turbulent mean flow
// ---------------------------------------------------------------------------

/// The turbulent correction vanishes below the transition (Re ≤ 2300,
/// methods.md §2.5): the turbulent model then gives exactly the laminar Γ and
/// Zc. Above it, the linearised Blasius correction of methods.md §2.5's
/// worked example (D = 10 mm, 60 L/min, ν = 32e-6, ρ = 870, c0 = 1350 m/s:
/// Re Γ(225 Hz) rises from 0.02325 to 0.03562 1/m) — oracle [6] (mpmath;
/// R'_t cross-checked with `mp.diff` of Δp/L, agreement 2e-31).
#[test]
fn turbulent_correction_vanishes_below_the_transition() {
    let b = 870.0 * 1350.0 * 1350.0;
    let laminar = rigid_line(b, LineModel::Laminar);
    let q_at = |re: f64| re * PI * 5e-3 * 32e-6 / 2.0;
    for re in [0.0, 500.0, 2000.0, TRANSITION_REYNOLDS] {
        let q = q_at(re);
        assert!((reynolds_number(q, 5e-3, 32e-6) - re).abs() < 1e-9);
        let turbulent = LineProperties {
            model: LineModel::Turbulent,
            mean_flow: MeanFlow::Given(q),
            ..laminar
        };
        assert_eq!(turbulent.turbulent_resistance_per_m(), 0.0);
        for f in [10.0, 225.0, 3000.0] {
            assert_eq!(
                turbulent.propagation(omega(f)),
                laminar.propagation(omega(f))
            );
        }
    }
    let turbulent = LineProperties {
        model: LineModel::Turbulent,
        mean_flow: MeanFlow::FromPumps(1e-3),
        ..laminar
    };
    assert!((turbulent.turbulent_resistance_per_m() - 3.782059819590797e8).abs() < 1.0);
    let p = turbulent.propagation(omega(225.0));
    assert!(rel(p.gamma, C64::new(3.561784695083927e-2, 1.069801018669900e0)) < 1e-11);
    assert!(rel(p.zc, C64::new(1.527698066142283e10, -5.086302495262329e8)) < 1e-11);
    assert!((p.gamma.re - 0.03562).abs() < 5e-6);
    let l = laminar.propagation(omega(225.0));
    assert!((l.gamma.re - 0.02325).abs() < 5e-6);
    let p = turbulent.propagation(omega(1000.0));
    assert!(rel(p.gamma, C64::new(6.044658589543755e-2, 4.701319915570033e0)) < 1e-11);
}

// ---------------------------------------------------------------------------
// Mean-flow split
// ---------------------------------------------------------------------------

fn pump(node: usize, displacement: Option<f64>) -> Pump {
    Pump {
        name: "p".into(),
        node,
        speed_rev_s: 25.0,
        speed_range_rev_s: None,
        pumping_elements: 9,
        displacement_m3: displacement,
        shaft: None,
        flow_ripple: FlowRipple::Table {
            reference_speed_rev_s: 25.0,
            harmonics: vec![FlowHarmonic {
                order: 1,
                amplitude_m3_s: 1e-5,
                phase_rad: 0.0,
            }],
        },
        source_impedance: SourceImpedance::Volume {
            capacitance_m3_pa: 6e-14,
            leakage_resistance_pa_s_m3: None,
        },
    }
}

fn small_circuit(parts: Vec<(ElementKind, Connection)>, nodes: usize) -> Circuit {
    Circuit {
        title: None,
        fluid: Fluid {
            density_kg_m3: 870.0,
            bulk_modulus_pa: 1.6e9,
            kinematic_viscosity_m2_s: 32e-6,
        },
        nodes: (0..nodes)
            .map(|i| Node {
                name: format!("n{i}"),
            })
            .collect(),
        elements: parts
            .into_iter()
            .enumerate()
            .map(|(i, (kind, connection))| Element {
                name: format!("e{i}"),
                kind,
                connection,
            })
            .collect(),
        pumps: vec![pump(0, None)],
        taps: Vec::new(),
        harmonics: 1,
    }
}

fn rigid_tube(length_m: f64, model: LineModel) -> ElementKind {
    ElementKind::Tube(Tube {
        line: Line {
            properties: rigid_line(870.0 * 1350.0 * 1350.0, model),
            length_m,
        },
        wall: Wall::Rigid,
    })
}

/// Kirchhoff's laws with linear resistances: a pump feeding a tee that splits
/// into two lines, each ending in a load valve (DC secant resistance R/2 for
/// R = 2Δp/Q), and a dead leg. The branch flows divide inversely to the
/// branch resistances (line Hagen–Poiseuille R = 8μl/(πr⁴) plus valve R/2),
/// the dead leg carries nothing, and the flows scale with pump speed.
#[test]
fn mean_flow_splits_by_kirchhoff() {
    let (ra, rb) = (4e10, 1e11);
    let parts = vec![
        (
            rigid_tube(1.0, LineModel::Turbulent),
            Connection::Series { a: 0, b: 1 },
        ),
        (
            rigid_tube(2.0, LineModel::Laminar),
            Connection::Series { a: 1, b: 2 },
        ),
        (
            rigid_tube(0.5, LineModel::Laminar),
            Connection::Series { a: 1, b: 3 },
        ),
        (
            ElementKind::LoadValve(LoadValve {
                resistance_pa_s_m3: ra,
            }),
            Connection::Shunt { at: 2 },
        ),
        (
            ElementKind::LoadValve(LoadValve {
                resistance_pa_s_m3: rb,
            }),
            Connection::Shunt { at: 3 },
        ),
        (
            rigid_tube(0.7, LineModel::Laminar),
            Connection::Series { a: 1, b: 4 },
        ),
        (ElementKind::ClosedEnd, Connection::Shunt { at: 4 }),
        (
            ElementKind::Volume(Volume {
                volume_m3: 1e-3,
                bulk_modulus_pa: 1.6e9,
            }),
            Connection::Shunt { at: 2 },
        ),
    ];
    let mut c = small_circuit(parts, 5);
    // no displacement: mean flows unknown
    assert!(mean_flows(&c).element_flows_m3_s[0].is_none());
    c.pumps[0].displacement_m3 = Some(40e-6); // 1e-3 m³/s at 25 rev/s
    let q = 1e-3;
    let r_line = |l: f64| 8.0 * 870.0 * 32e-6 * l / (PI * 5e-3f64.powi(4));
    let (g2, g3) = (
        1.0 / (r_line(2.0) + ra / 2.0),
        1.0 / (r_line(0.5) + rb / 2.0),
    );
    let flows = resolve_line_mean_flows(&mut c).element_flows_m3_s;
    let close = |a: Option<f64>, b: f64| (a.unwrap() - b).abs() < 1e-12 * q;
    assert!(close(flows[0], q));
    assert!(close(flows[1], q * g2 / (g2 + g3)));
    assert!(close(flows[2], q * g3 / (g2 + g3)));
    assert!(close(flows[3], q * g2 / (g2 + g3)) && close(flows[4], q * g3 / (g2 + g3)));
    assert!(close(flows[5], 0.0));
    // stored on the lines, and linear in speed after a re-resolve
    let line0 = |c: &Circuit| c.elements[0].kind.line().unwrap().properties.mean_flow;
    assert_eq!(line0(&c), MeanFlow::FromPumps(flows[0].unwrap()));
    c.pumps[0].speed_rev_s = 50.0;
    resolve_line_mean_flows(&mut c);
    assert!((line0(&c).flow_m3_s().unwrap() - 2.0 * q).abs() < 1e-12 * q);
    // Re = 2Q/(πrν) = 7958 > 2300: the turbulent line gets its correction
    let props = c.elements[0].kind.line().unwrap().properties;
    assert!(props.turbulent_resistance_per_m() > 0.0);
    let warnings = ripline::diagnostics::mean_flow_warnings(&c);
    assert!(
        warnings
            .iter()
            .any(|w| w.subject == "tube `e0`" && w.message.contains("Re = 7958")),
        "{warnings:?}"
    );
    // the laminar lines with turbulent flow are flagged too
    assert!(warnings.iter().any(|w| w.subject == "tube `e1`"));
}

// ---------------------------------------------------------------------------
// Ripple profile
// ---------------------------------------------------------------------------

/// A lossless line closed at its far end carries a standing wave
/// P(x) = P(L) cos k(L − x): pressure antinodes at L − x = nλ/2 (the closed
/// end is one), nodes at L − x = (2n − 1)λ/4 (Kinsler et al., Fundamentals
/// of Acoustics, 4th ed., §10.3). The profile's samples must find them, and
/// the pressure read exactly at the analytic nodes must vanish.
#[test]
fn profile_of_a_closed_lossless_tube_has_its_nodes_where_theory_puts_them() {
    let (c0, l) = (1350.0, 3.0);
    let parts = vec![
        (
            rigid_tube(l, LineModel::Lossless),
            Connection::Series { a: 0, b: 1 },
        ),
        (ElementKind::ClosedEnd, Connection::Shunt { at: 1 }),
    ];
    let mut circuit = small_circuit(parts, 2);
    // f_p = 25 rev/s × 9 = 225 Hz: λ = 6 m... use harmonic 3 (675 Hz, λ = 2 m)
    circuit.pumps[0].flow_ripple = FlowRipple::Table {
        reference_speed_rev_s: 25.0,
        harmonics: vec![FlowHarmonic {
            order: 3,
            amplitude_m3_s: 1e-5,
            phase_rad: 0.0,
        }],
    };
    let f = 675.0;
    let lambda = c0 / f;
    let nodes: Vec<f64> = (1..)
        .map(|n| l - (2 * n - 1) as f64 * lambda / 4.0)
        .take_while(|x| *x >= 0.0)
        .collect();
    let antinodes: Vec<f64> = (0..)
        .map(|n| l - n as f64 * lambda / 2.0)
        .take_while(|x| *x >= 0.0)
        .collect();
    assert_eq!(nodes, vec![2.5, 1.5, 0.5]);
    circuit.taps = nodes
        .iter()
        .map(|&x| Tap {
            name: format!("{x}"),
            location: TapLocation::AlongTube {
                element: 0,
                distance_m: x,
            },
        })
        .collect();
    let plan = Plan::compile(&circuit).unwrap();
    let profile = ripple_profile(&plan, 0, 3).unwrap();
    assert_eq!(profile.freq_hz, f);
    let line = &profile.lines[0];
    let amp: Vec<f64> = line.points.iter().map(|p| p.pressure.norm()).collect();
    let peak = amp.iter().cloned().fold(0.0, f64::max);
    let step = l / (line.points.len() - 1) as f64;
    let local = |cmp: fn(f64, f64) -> bool| -> Vec<f64> {
        (0..amp.len())
            .filter(|&i| {
                (i == 0 || cmp(amp[i], amp[i - 1]))
                    && (i + 1 == amp.len() || cmp(amp[i], amp[i + 1]))
            })
            .map(|i| line.points[i].position_m)
            .collect()
    };
    let minima = local(|a, b| a <= b);
    let maxima = local(|a, b| a >= b);
    assert_eq!(minima.len(), nodes.len(), "{minima:?}");
    for (found, want) in minima.iter().rev().zip(&nodes) {
        assert!(
            (found - want).abs() <= step / 2.0 + 1e-12,
            "node {found} vs {want}"
        );
    }
    assert_eq!(maxima.len(), antinodes.len(), "{maxima:?}");
    for (found, want) in maxima.iter().rev().zip(&antinodes) {
        assert!(
            (found - want).abs() <= step / 2.0 + 1e-12,
            "antinode {found} vs {want}"
        );
    }
    // exactly at the analytic nodes the pressure vanishes
    let mut ws = plan.workspace();
    let sol = plan
        .solve(f, &[(0, circuit.pumps[0].flow_ripple(3))], &mut ws)
        .unwrap();
    for tap in &circuit.taps {
        let p = tap_pressure(&circuit, &sol, tap.location);
        assert!(p.norm() < 1e-9 * peak, "{}: {}", tap.name, p.norm());
    }
    // every antinode has the closed end's amplitude
    for x in antinodes {
        let p = tap_pressure(
            &circuit,
            &sol,
            TapLocation::AlongTube {
                element: 0,
                distance_m: x,
            },
        );
        assert!((p.norm() - sol.node_pressures[1].norm()).abs() < 1e-9 * peak);
    }
}

/// Passivity (energy conservation): the time-averaged power flowing into
/// every two-port, ½ Re(Pa·Qa* − Pb·Qb*) with flows in the a→b sense at both
/// ends, is never negative. Checked on the hose example (two hoses, a
/// turbulent tube, free air) over 0.5 Hz .. 5 kHz.
#[test]
fn a_circuit_with_hoses_and_turbulent_friction_is_passive() {
    let text = std::fs::read_to_string(
        std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("networks/forestry_crane_hose.yaml"),
    )
    .unwrap();
    let circuit = ripline::io::parse_circuit(&text, "forestry_crane_hose.yaml").unwrap();
    let tube = circuit.elements[0].kind.line().unwrap().properties;
    assert!(
        tube.turbulent_resistance_per_m() > 0.0,
        "the example's tube is turbulent"
    );
    let plan = Plan::compile(&circuit).unwrap();
    let mut ws = plan.workspace();
    let mut f = 0.5;
    while f < 5e3 {
        let sol = plan
            .solve(f, &[(circuit.pumps[0].node, C64::new(1e-5, 0.0))], &mut ws)
            .unwrap();
        for (e, flows) in circuit.elements.iter().zip(&sol.end_flows) {
            let (Some((qa, qb)), Connection::Series { a, b }) = (flows, e.connection) else {
                continue;
            };
            let (pa, pb) = (sol.node_pressures[a], sol.node_pressures[b]);
            let power = 0.5 * (pa * qa.conj() - pb * qb.conj()).re;
            let scale = 0.5 * (pa.norm() * qa.norm() + pb.norm() * qb.norm());
            assert!(power >= -1e-9 * scale, "{} at {f} Hz: {power}", e.name);
        }
        f *= 1.3;
    }
}

/// An anechoic end matches its line's Zc, turbulent correction included: the
/// mean flow leaves through the end (it stands for a line that continues),
/// the line's Re = 2Q/(πrν) = 9947 > 2300, and the input impedance seen by an
/// ideal flow source is Zc at every frequency (methods.md §8 case 6).
#[test]
fn an_anechoic_end_matches_a_turbulent_line() {
    let text = "fluid: {density: 870, bulk_modulus: 1.6 GPa, viscosity: 32 cSt}\n\
                line_model: turbulent\n\
                pump: {node: a, speed: 1500 rpm, pumping_elements: 9, displacement: 50 cm3,\n\
                \x20 flow_ripple: [{harmonic: 1, amplitude: 1 L/min}], source_impedance: {volume: 0}}\n\
                elements:\n\
                \x20 - {name: line, kind: tube, from: a, to: b, length: 4 m, bore: 10 mm, rigid: true}\n\
                \x20 - {name: end, kind: anechoic_end, at: b}\n";
    let circuit = ripline::io::parse_circuit(text, "t.yaml").unwrap();
    let line = circuit.elements[0].kind.line().unwrap().properties;
    let q = line.mean_flow.flow_m3_s().unwrap();
    assert!(matches!(line.mean_flow, MeanFlow::FromPumps(_)));
    assert!((q - 50e-6 * 25.0).abs() < 1e-15, "{q}");
    assert!((line.reynolds_number().unwrap() - 2.0 * 1.25e-3 / (PI * 5e-3 * 32e-6)).abs() < 1e-6);
    assert!(line.turbulent_resistance_per_m() > 0.0);
    let ElementKind::Anechoic(end) = &circuit.elements[1].kind else {
        panic!("element 1 is the anechoic end")
    };
    assert_eq!(end.line, line);
    assert_eq!(end.line.mean_flow, line.mean_flow);
    let plan = Plan::compile(&circuit).unwrap();
    let mut ws = plan.workspace();
    for f in [5.0, 225.0, 2000.0] {
        let z = plan
            .solve(f, &[(0, C64::new(1.0, 0.0))], &mut ws)
            .unwrap()
            .node_pressures[0];
        assert!(rel(z, line.propagation(omega(f)).zc) < 1e-9, "{f} Hz");
    }
}
