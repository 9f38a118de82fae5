//! Physics checks of the line models and the network solve against published
//! formulas and against values computed with mpmath/scipy.
//!
//! Reference values marked "mpmath" were computed by
//! `tests/oracles/line_refs.py` (mpmath 1.3.0 at mp.dps = 30, cross-checked
//! with scipy 1.17.1 `scipy.special.jve`); the item number of that script is
//! given beside each table.

// Reference values are pasted with all the digits the oracle printed.
#![allow(clippy::excessive_precision)]

use ripline::C64;
use ripline::circuit::{Circuit, Node, TapLocation};
use ripline::elements::{
    Connection, Element, ElementKind, Inertance, LoadValve, Orifice, Tube, Volume,
};
use ripline::fluid::Fluid;
use ripline::line::viscous::{one_minus_viscous_factor, viscous_factor};
use ripline::line::{Line, LineModel, LineProperties, MeanFlow};
use ripline::network::{Plan, SolveError};
use ripline::source::{FlowHarmonic, FlowRipple, Pump, SourceImpedance};
use ripline::wall::Wall;
use std::f64::consts::PI;

const RHO: f64 = 870.0;
const C0: f64 = 1350.0;
const NU: f64 = 32e-6;

fn rel(a: C64, b: C64) -> f64 {
    (a - b).norm() / b.norm()
}

/// methods.md §8 default line: r = 5 mm, ν = 32e-6 m²/s, ρ = 870 kg/m³, c0 = 1350 m/s.
fn line5(model: LineModel) -> LineProperties {
    LineProperties {
        radius_m: 5e-3,
        density_kg_m3: RHO,
        kinematic_viscosity_m2_s: NU,
        effective_bulk_modulus_pa: RHO * C0 * C0,
        model,
        viscoelastic_wall: None,
        mean_flow: MeanFlow::Unknown,
    }
}

fn fluid() -> Fluid {
    Fluid {
        density_kg_m3: RHO,
        bulk_modulus_pa: RHO * C0 * C0,
        kinematic_viscosity_m2_s: NU,
    }
}

/// An ideal flow source (Zs = ∞) at node 0 with a unit first harmonic.
fn ideal_pump() -> Pump {
    Pump {
        name: "ideal".into(),
        node: 0,
        speed_rev_s: 10.0,
        speed_range_rev_s: None,
        pumping_elements: 1,
        displacement_m3: None,
        shaft: None,
        flow_ripple: FlowRipple::Table {
            reference_speed_rev_s: 10.0,
            harmonics: vec![FlowHarmonic {
                order: 1,
                amplitude_m3_s: 1.0,
                phase_rad: 0.0,
            }],
        },
        source_impedance: SourceImpedance::Volume {
            capacitance_m3_pa: 0.0,
            leakage_resistance_pa_s_m3: None,
        },
    }
}

fn tube(props: LineProperties, length_m: f64) -> ElementKind {
    ElementKind::Tube(Tube {
        line: Line {
            properties: props,
            length_m,
        },
        wall: Wall::Rigid,
    })
}

/// A circuit from (name, kind, connection) triples over `n` nodes named n0.., fed at n0.
fn circuit(n: usize, parts: Vec<(ElementKind, Connection)>) -> Circuit {
    Circuit {
        title: None,
        fluid: fluid(),
        nodes: (0..n)
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
        pumps: vec![ideal_pump()],
        taps: Vec::new(),
        harmonics: 1,
    }
}

/// Input impedance P(n0)/Q seen by a unit flow injected at node 0.
fn input_impedance(plan: &Plan, freq_hz: f64) -> Result<C64, SolveError> {
    let mut ws = plan.workspace();
    let sol = plan.solve(freq_hz, &[(0, C64::new(1.0, 0.0))], &mut ws)?;
    Ok(sol.node_pressures[0])
}

fn series(a: usize, b: usize) -> Connection {
    Connection::Series { a, b }
}

fn shunt(at: usize) -> Connection {
    Connection::Shunt { at }
}

// ---------------------------------------------------------------------------
// Viscous factor F(s) = 2J1(α)/(αJ0(α)), α = s e^{−jπ/4}
// ---------------------------------------------------------------------------

/// mpmath (item 1): `F = 2*mp.besselj(1,a)/(a*mp.besselj(0,a))`,
/// `1-F = -mp.besselj(2,a)/mp.besselj(0,a)`, a = s·e^{−jπ/4}.
/// Columns: (s, Re F, Im F, Re(1−F), Im(1−F)).
const VISCOUS_FACTOR_REFS: [(f64, f64, f64, f64, f64); 16] = [
    (
        1e-3,
        9.999999999999792e-1,
        -1.249999999999964e-7,
        2.083333333333271e-14,
        1.249999999999964e-7,
    ),
    (
        1e-2,
        9.999999997916667e-1,
        -1.249999999641927e-5,
        2.083333332714844e-10,
        1.249999999641927e-5,
    ),
    (
        1e-1,
        9.999979166728515e-1,
        -1.249996419281526e-3,
        2.083327148455988e-6,
        1.249996419281526e-3,
    ),
    (
        1.0,
        9.797672048237046e-1,
        -1.215230913357202e-1,
        2.023279517629542e-2,
        1.215230913357202e-1,
    ),
    (
        3.0,
        4.990102975863977e-1,
        -3.599628391224830e-1,
        5.009897024136023e-1,
        3.599628391224830e-1,
    ),
    (
        8.0,
        1.771930976528398e-1,
        -1.608237132854101e-1,
        8.228069023471602e-1,
        1.608237132854101e-1,
    ),
    (
        10.0,
        1.416254683479040e-1,
        -1.312480777762851e-1,
        8.583745316520960e-1,
        1.312480777762851e-1,
    ),
    (
        20.0,
        7.073442258359007e-2,
        -6.818868115939558e-2,
        9.292655774164099e-1,
        6.818868115939558e-2,
    ),
    (
        25.0,
        5.658052419862831e-2,
        -5.495726063614507e-2,
        9.434194758013717e-1,
        5.495726063614507e-2,
    ),
    (
        30.0,
        4.714731929453061e-2,
        -4.602280623109718e-2,
        9.528526807054694e-1,
        4.602280623109718e-2,
    ),
    (
        50.0,
        2.828572634283790e-2,
        -2.788285797167050e-2,
        9.717142736571621e-1,
        2.788285797167050e-2,
    ),
    (
        100.0,
        1.414231492803213e-2,
        -1.404195887548431e-2,
        9.858576850719679e-1,
        1.404195887548431e-2,
    ),
    (
        300.0,
        4.714051786173187e-3,
        -4.702927549628984e-3,
        9.952859482138268e-1,
        4.702927549628984e-3,
    ),
    (
        1e3,
        1.414213739400067e-3,
        -1.413213385596677e-3,
        9.985857862605999e-1,
        1.413213385596677e-3,
    ),
    (
        1e4,
        1.414213564141112e-4,
        -1.414113560605328e-4,
        9.998585786435859e-1,
        1.414113560605328e-4,
    ),
    (
        1e5,
        1.414213562390773e-5,
        -1.414203562355417e-5,
        9.999858578643761e-1,
        1.414203562355417e-5,
    ),
];

#[test]
fn viscous_factor_matches_mpmath_to_1e_12() {
    for (s, fr, fi, gr, gi) in VISCOUS_FACTOR_REFS {
        let f = viscous_factor(s);
        let g = one_minus_viscous_factor(s);
        assert!(rel(f, C64::new(fr, fi)) < 1e-12, "F({s}) = {f}");
        assert!(rel(g, C64::new(gr, gi)) < 1e-12, "1-F({s}) = {g}");
    }
}

/// mpmath (tests/oracles/line_refs.py item 10): `mp.coth(g)`, `mp.csch(g)`
/// at dps = 40 for Γl = g: an electrically short line, one near its
/// quarter-wave resonance, a general one and a long lossy one.
/// Columns: (Re Γl, Im Γl, Re coth, Im coth, Re csch, Im csch).
// 1.5707963 is a test angle near π/2, not π/2 itself.
#[allow(clippy::approx_constant)]
const COTH_CSCH_REFS: [(f64, f64, f64, f64, f64, f64); 5] = [
    (
        1e-9,
        1e-7,
        9.999000099990034e4,
        -9.999000099989968e6,
        9.999000099989984e4,
        -9.999000099990018e6,
    ),
    (
        1e-4,
        2e-2,
        2.500270861563932e-1,
        -4.999208318681134e1,
        2.499770811561015e-1,
        -5.000208352013300e1,
    ),
    (
        3e-3,
        1.5707963,
        2.999991000032402e-3,
        -2.679465546660867e-8,
        8.038408697582990e-11,
        -9.999955000168753e-1,
    ),
    (
        0.5,
        3.1,
        2.150262264014399,
        1.520284427758221e-1,
        -1.905244005169553,
        -1.715796101028177e-1,
    ),
    (
        2.0,
        40.0,
        9.953060043739276e-1,
        3.624867520789587e-2,
        -1.764415016691509e-1,
        -2.044786727822725e-1,
    ),
];

/// The line's admittance two-port (1/Zc)[[coth Γl, −csch Γl], [−csch Γl,
/// coth Γl]] (methods.md §2.1) against mpmath, with Zc = 1 and l = 1.
#[test]
fn line_admittance_matches_mpmath_coth_and_csch() {
    let line = Line {
        properties: line5(LineModel::Laminar),
        length_m: 1.0,
    };
    for (gr, gi, cr, ci, sr, si) in COTH_CSCH_REFS {
        let prop = ripline::line::Propagation {
            gamma: C64::new(gr, gi),
            zc: C64::new(1.0, 0.0),
        };
        let y = line.admittance(&prop).unwrap();
        let (coth, csch) = (C64::new(cr, ci), C64::new(sr, si));
        assert!(rel(y[0][0], coth) < 1e-13, "coth({gr}+j{gi}) = {}", y[0][0]);
        assert!(rel(y[1][1], coth) < 1e-13);
        assert!(
            rel(-y[0][1], csch) < 1e-13,
            "csch({gr}+j{gi}) = {}",
            -y[0][1]
        );
        assert!(rel(-y[1][0], csch) < 1e-13);
    }
}

// ---------------------------------------------------------------------------
// Laminar line: Γ and Zc
// ---------------------------------------------------------------------------

/// mpmath (item 2): r = 5 mm, ν = 32e-6, ρ = 870, c0 = 1350;
/// Z' = jωρ/(A(1−F)), Y' = jωA/B, Γ = mp.sqrt(Z'Y'), Zc = Z'/Γ.
/// Columns: (f Hz, Re Γ, Im Γ, Re Zc, Im Zc).
const LAMINAR_5MM: [(f64, f64, f64, f64, f64); 6] = [
    (
        1e-3,
        1.328047160374238e-4,
        1.329134110837066e-4,
        4.270569988717829e11,
        -4.267077566103790e11,
    ),
    (
        1.0,
        2.943773220005721e-3,
        6.118092968133312e-3,
        1.965771851377804e10,
        -9.458480874462176e9,
    ),
    (
        10.0,
        5.730722131572426e-3,
        5.114715901714642e-2,
        1.643382112654095e10,
        -1.841307791985062e9,
    ),
    (
        100.0,
        1.582874773361091e-2,
        4.802478025717395e-1,
        1.543058624474632e10,
        -5.085850590921345e8,
    ),
    (
        1000.0,
        4.792928988580878e-2,
        4.701175637605765,
        1.510509693939509e10,
        -1.539990474234271e8,
    ),
    (
        10000.0,
        1.494917307563145e-1,
        4.669065166387569e1,
        1.500192449532799e10,
        -4.803239144373023e7,
    ),
];

#[test]
fn laminar_gamma_and_zc_match_mpmath() {
    let props = line5(LineModel::Laminar);
    for (f, gr, gi, zr, zi) in LAMINAR_5MM {
        let p = props.propagation(2.0 * PI * f);
        assert!(
            rel(p.gamma, C64::new(gr, gi)) < 1e-11,
            "Γ at {f} Hz: {}",
            p.gamma
        );
        assert!(
            rel(p.zc, C64::new(zr, zi)) < 1e-11,
            "Zc at {f} Hz: {}",
            p.zc
        );
    }
    // A second line (item 5): r = 6 mm, ν = 46e-6, ρ = 861, B = 1.5 GPa.
    let props = LineProperties {
        radius_m: 6e-3,
        density_kg_m3: 861.0,
        kinematic_viscosity_m2_s: 46e-6,
        effective_bulk_modulus_pa: 1.5e9,
        model: LineModel::Laminar,
        viscoelastic_wall: None,
        mean_flow: MeanFlow::Unknown,
    };
    let refs = [
        (
            50.0,
            1.173992577944093e-2,
            2.487092551866259e-1,
            1.049979838263049e10,
            -4.956263232692290e8,
        ),
        (
            300.0,
            2.727541041971300e-2,
            1.454370715060864,
            1.023323349338333e10,
            -1.919150602816579e8,
        ),
        (
            2000.0,
            6.885907695223809e-2,
            9.588511558012698,
            1.011999312943836e10,
            -7.267586647207900e7,
        ),
    ];
    for (f, gr, gi, zr, zi) in refs {
        let p = props.propagation(2.0 * PI * f);
        assert!(rel(p.gamma, C64::new(gr, gi)) < 1e-11, "Γ at {f} Hz");
        assert!(rel(p.zc, C64::new(zr, zi)) < 1e-11, "Zc at {f} Hz");
    }
}

/// Low-frequency limit (methods.md §2.4; Hagen–Poiseuille): as ω → 0 the
/// laminar series impedance tends to R' + jω(4/3)ρ/A with R' = 8μ/(πr⁴).
#[test]
fn laminar_low_frequency_limit_is_hagen_poiseuille() {
    let props = line5(LineModel::Laminar);
    let omega = 2.0 * PI * 1e-3;
    let p = props.propagation(omega);
    let z_series = p.gamma * p.zc; // Z' = Γ·Zc
    let r_prime = 8.0 * RHO * NU / (PI * 5e-3_f64.powi(4));
    let lumped = C64::new(r_prime, omega * 4.0 / 3.0 * RHO / props.area_m2());
    assert!(rel(z_series, lumped) < 1e-7, "{z_series} vs {lumped}");
    assert!((props.poiseuille_resistance_per_m() - r_prime).abs() < 1e-6 * r_prime);

    // A 2 m line to a constant-pressure end: Re Zin → R'L (methods.md §8
    // case 5); the exact value at 1 mHz is mpmath item 4:
    // Zc·tanh(ΓL) = 2.268607338853182e8 + j1.855893207279169e5.
    let c = circuit(
        2,
        vec![
            (tube(props, 2.0), series(0, 1)),
            (ElementKind::Tank, shunt(1)),
        ],
    );
    let plan = Plan::compile(&c).unwrap();
    let zin = input_impedance(&plan, 1e-3).unwrap();
    assert!(
        rel(zin, C64::new(2.268607338853182e8, 1.855893207279169e5)) < 1e-9,
        "{zin}"
    );
    assert!((zin.re - r_prime * 2.0).abs() < 1e-7 * r_prime * 2.0);
}

/// High-frequency limit (methods.md §2.4): Γ → (jω/c0)(1 + (1−j)/(√2 s)) and
/// Zc → Z0(1 + (1−j)/(√2 s)), with error O(1/s²); the lossless model is the
/// limit.
#[test]
fn laminar_high_frequency_limit_approaches_lossless() {
    let lam = line5(LineModel::Laminar);
    let lossless = line5(LineModel::Lossless);
    let z0 = RHO * C0 / lam.area_m2();
    for f in [1e4, 1e5, 1e6] {
        let omega = 2.0 * PI * f;
        let s = lam.shear_number(omega);
        let corr = C64::new(1.0, -1.0) / (2f64.sqrt() * s);
        let p = lam.propagation(omega);
        let gamma_hf = C64::new(0.0, omega / C0) * (1.0 + corr);
        assert!(rel(p.gamma, gamma_hf) < 2.0 / (s * s), "Γ at {f} Hz");
        assert!(rel(p.zc, C64::new(z0, 0.0) * (1.0 + corr)) < 2.0 / (s * s));
        let pl = lossless.propagation(omega);
        assert!(rel(p.gamma, pl.gamma) < 1.1 / s && rel(p.zc, pl.zc) < 1.1 / s);
    }
}

// ---------------------------------------------------------------------------
// Wave speed with wall compliance
// ---------------------------------------------------------------------------

/// Korteweg thin-wall wave speed c = √(B/ρ / (1 + B D/(E e))) (Korteweg
/// 1878; Wylie & Streeter, Fluid Transients in Systems, 1993, eq. 1.6 family).
/// Steel E = 206 GPa, D = 10 mm, e = 2 mm, B = 1.62 GPa, ρ = 861 kg/m³:
/// c = 1345.492273234807 m/s (mpmath item 6; methods.md §1.5 gives 1345.5).
#[test]
fn korteweg_wave_speed_in_thin_walled_steel_tube() {
    let cases = [
        (206e9, 10e-3, 2e-3, 1.62e9, 861.0, 1345.492273234807),
        (210e9, 12e-3, 1.5e-3, 1.6e9, 870.0, 1316.595659927616),
    ];
    for (e_mod, bore, wall, b, rho, want) in cases {
        let w = Wall::Elastic {
            thickness_m: wall,
            youngs_modulus_pa: e_mod,
        };
        let props = LineProperties {
            radius_m: bore / 2.0,
            density_kg_m3: rho,
            kinematic_viscosity_m2_s: NU,
            effective_bulk_modulus_pa: w.effective_bulk_modulus(b, bore),
            model: LineModel::Lossless,
            viscoelastic_wall: None,
            mean_flow: MeanFlow::Unknown,
        };
        assert!(
            (props.wave_speed_m_s() - want).abs() < 1e-9 * want,
            "{}",
            props.wave_speed_m_s()
        );
    }
}

// ---------------------------------------------------------------------------
// Lossless resonances of a line driven by an ideal flow source
// ---------------------------------------------------------------------------

/// Kinsler et al., Fundamentals of Acoustics (4th ed., §10.3): a lossless line
/// of length L driven by a flow source has Zin = −jZ0 cot(kL) with a closed
/// far end (poles at n·c/2L, zeros at (2n−1)c/4L) and Zin = jZ0 tan(kL) with
/// a constant-pressure far end (poles at (2n−1)c/4L).
#[test]
fn lossless_line_resonances() {
    let props = line5(LineModel::Lossless);
    let z0 = RHO * C0 / props.area_m2();
    let l = 2.0;
    let closed = circuit(
        2,
        vec![
            (tube(props, l), series(0, 1)),
            (ElementKind::ClosedEnd, shunt(1)),
        ],
    );
    let open = circuit(
        2,
        vec![
            (tube(props, l), series(0, 1)),
            (ElementKind::Tank, shunt(1)),
        ],
    );
    let closed_plan = Plan::compile(&closed).unwrap();
    let open_plan = Plan::compile(&open).unwrap();
    for f in [20.0, 84.375, 150.0, 300.0, 600.0, 1000.0] {
        let kl = 2.0 * PI * f * l / C0;
        let zc = input_impedance(&closed_plan, f).unwrap();
        let zo = input_impedance(&open_plan, f).unwrap();
        assert!(
            rel(zc, C64::new(0.0, -z0 / kl.tan())) < 1e-9,
            "closed, {f} Hz"
        );
        assert!(rel(zo, C64::new(0.0, z0 * kl.tan())) < 1e-9, "open, {f} Hz");
    }
    // methods.md §8 case 1: Zin(84.375 Hz) = ±j1.495420e10 (Z0·tan(π/4)).
    let z = input_impedance(&open_plan, 84.375).unwrap();
    assert!((z.im - 1.495419845291449e10).abs() < 1e-6 * 1.5e10);
    // Zeros of the closed line at (2n−1)c/4L = 168.75, 506.25, 843.75 Hz.
    for n in 1..=3 {
        let f = (2 * n - 1) as f64 * C0 / (4.0 * l);
        let z = input_impedance(&closed_plan, f).unwrap();
        assert!(z.norm() < 1e-9 * z0, "zero at {f} Hz: {z}");
    }
    // Poles: an ideal source into infinite impedance has no solution; the
    // solver must say so and name the frequency, not return inf or NaN.
    for (plan, f) in [
        (&open_plan, 168.75),
        (&open_plan, 506.25),
        (&closed_plan, 337.5),
        (&closed_plan, 675.0),
    ] {
        match input_impedance(plan, f) {
            Err(SolveError::Singular { freq_hz, .. }) => assert_eq!(freq_hz, f),
            other => panic!("expected a singular network at {f} Hz, got {other:?}"),
        }
    }
    // Just off a pole the impedance is large but finite and rises towards it.
    let near = input_impedance(&open_plan, 168.75 * (1.0 + 1e-6)).unwrap();
    let further = input_impedance(&open_plan, 168.75 * (1.0 + 1e-3)).unwrap();
    assert!(near.norm() > 100.0 * further.norm() && near.norm().is_finite());
}

/// Laminar lines: the first maxima of |Zc tanh ΓL| (constant-pressure end)
/// and |Zc coth ΓL| (closed end) for L = 2 m sit below the lossless c/4L and
/// c/2L because of the dispersion (methods.md §8 case 2). Peak frequencies and
/// levels: mpmath item 3 (`mp.findroot` on d/df log|Zin|²):
/// 164.6057836371341 Hz / 3.829379399175576e11 and
/// 331.6381120773605 Hz / 2.719036491979100e11.
#[test]
fn laminar_line_resonance_peaks() {
    let props = line5(LineModel::Laminar);
    let open = circuit(
        2,
        vec![
            (tube(props, 2.0), series(0, 1)),
            (ElementKind::Tank, shunt(1)),
        ],
    );
    let closed = circuit(
        2,
        vec![
            (tube(props, 2.0), series(0, 1)),
            (ElementKind::ClosedEnd, shunt(1)),
        ],
    );
    for (c, lo, hi, f_want, z_want) in [
        (&open, 150.0, 180.0, 164.6057836371341, 3.829379399175576e11),
        (
            &closed,
            310.0,
            350.0,
            331.6381120773605,
            2.719036491979100e11,
        ),
    ] {
        let plan = Plan::compile(c).unwrap();
        let mag = |f: f64| input_impedance(&plan, f).unwrap().norm();
        let (f_peak, z_peak) = golden_max(mag, lo, hi);
        assert!((f_peak - f_want).abs() < 1e-4, "{f_peak}");
        assert!((z_peak - z_want).abs() < 1e-9 * z_want, "{z_peak:e}");
    }
    // methods.md §8 case 4: closed-end laminar line at 225 Hz,
    // Zin = 1.209047477447297e9 + j9.697314942173713e9 (mpmath item 3).
    let plan = Plan::compile(&closed).unwrap();
    let z = input_impedance(&plan, 225.0).unwrap();
    assert!(
        rel(z, C64::new(1.209047477447297e9, 9.697314942173713e9)) < 1e-10,
        "{z}"
    );
    assert!(z.re > 0.0, "passive");
}

fn golden_max(f: impl Fn(f64) -> f64, a: f64, b: f64) -> (f64, f64) {
    // coarse scan, then the library's golden-section refinement
    let n = 400;
    let mut best = a;
    for i in 0..=n {
        let x = a + (b - a) * i as f64 / n as f64;
        if f(x) > f(best) {
            best = x;
        }
    }
    let step = (b - a) / n as f64;
    ripline::analysis::search::golden_section_max(&f, best - step, best + step, 100)
}

// ---------------------------------------------------------------------------
// Two-ports: reciprocity, composition, agreement with the nodal solve
// ---------------------------------------------------------------------------

type M2 = [[C64; 2]; 2];

fn mul(a: M2, b: M2) -> M2 {
    let mut c = [[C64::new(0.0, 0.0); 2]; 2];
    for i in 0..2 {
        for j in 0..2 {
            c[i][j] = a[i][0] * b[0][j] + a[i][1] * b[1][j];
        }
    }
    c
}

/// mpmath item 9: T(L) of the 5 mm laminar line at 225 Hz for L = 2 m, and
/// the reciprocity and composition laws det T = 1, T(0.7)·T(1.3) = T(2.0)
/// (methods.md §8 case 3).
#[test]
fn transfer_matrix_is_reciprocal_and_composes() {
    let props = line5(LineModel::Laminar);
    let prop = props.propagation(2.0 * PI * 225.0);
    let t = |l: f64| {
        Line {
            properties: props,
            length_m: l,
        }
        .transfer(&prop)
    };
    let t2 = t(2.0);
    let want = [
        [
            C64::new(-5.386341108138027e-1, 3.920435357694137e-2),
            C64::new(-1.020625412774756e8, 1.289526692949829e10),
        ],
        [
            C64::new(-2.838304336239858e-12, 5.519078933780357e-11),
            C64::new(-5.386341108138027e-1, 3.920435357694137e-2),
        ],
    ];
    for i in 0..2 {
        for j in 0..2 {
            assert!(rel(t2[i][j], want[i][j]) < 1e-10, "T[{i}][{j}]");
        }
    }
    let det = t2[0][0] * t2[1][1] - t2[0][1] * t2[1][0];
    assert!((det - 1.0).norm() < 1e-12);
    let composed = mul(t(0.7), t(1.3));
    for i in 0..2 {
        for j in 0..2 {
            assert!(rel(composed[i][j], t2[i][j]) < 1e-12);
        }
    }
}

/// A chain of two-ports multiplied out (T = Π T_i; series Z: [[1, Z], [0, 1]];
/// shunt Y: [[1, 0], [Y, 1]]; methods.md §4) gives Zin = T11/T21 for an
/// open-circuited far end; the nodal solve must agree to 1e-9.
#[test]
fn chained_two_ports_agree_with_nodal_solve() {
    let a = line5(LineModel::Laminar);
    let b = LineProperties {
        radius_m: 8e-3,
        ..line5(LineModel::Laminar)
    };
    let r_orifice = 3e9;
    let vol = Volume {
        volume_m3: 0.4e-3,
        bulk_modulus_pa: RHO * C0 * C0,
    };
    let neck = Inertance {
        inertance_kg_m4: 4e6,
        resistance_pa_s_m3: 2e8,
    };
    let r_load = 4e10;
    let c = circuit(
        5,
        vec![
            (tube(a, 1.3), series(0, 1)),
            (
                ElementKind::Orifice(Orifice {
                    resistance_pa_s_m3: r_orifice,
                }),
                series(1, 2),
            ),
            (tube(b, 2.1), series(2, 3)),
            (ElementKind::Volume(vol), shunt(3)),
            (ElementKind::Inertance(neck), series(3, 4)),
            (
                ElementKind::LoadValve(LoadValve {
                    resistance_pa_s_m3: r_load,
                }),
                shunt(4),
            ),
        ],
    );
    let plan = Plan::compile(&c).unwrap();
    let one = C64::new(1.0, 0.0);
    let zero = C64::new(0.0, 0.0);
    for f in [5.0, 47.0, 225.0, 810.0, 2500.0] {
        let w = 2.0 * PI * f;
        let ta = Line {
            properties: a,
            length_m: 1.3,
        }
        .transfer(&a.propagation(w));
        let tb = Line {
            properties: b,
            length_m: 2.1,
        }
        .transfer(&b.propagation(w));
        let t_or = [[one, C64::new(r_orifice, 0.0)], [zero, one]];
        let t_vol = [[one, zero], [vol.admittance(w), one]];
        let t_neck = [[one, neck.impedance(w)], [zero, one]];
        let t_load = [[one, zero], [C64::new(1.0 / r_load, 0.0), one]];
        let t = [ta, t_or, tb, t_vol, t_neck, t_load]
            .into_iter()
            .reduce(mul)
            .unwrap();
        let z_chain = t[0][0] / t[1][0];
        let z_nodal = input_impedance(&plan, f).unwrap();
        assert!(
            rel(z_nodal, z_chain) < 1e-9,
            "{f} Hz: {z_nodal} vs {z_chain}"
        );
    }
}

/// Helmholtz resonator: a volume V behind a neck of inertance ρl/A has its
/// series resonance at f_H = (c0/2π)√(A/(lV)) (Kinsler et al., §10.8), where
/// the input impedance of neck + volume vanishes. V = 1 L, neck 10 mm × 50 mm,
/// c0 = 1350 m/s: f_H = 269.2860392709671 Hz (mpmath item 7; methods.md §8
/// case 7).
#[test]
fn helmholtz_resonance_in_the_network() {
    let area = PI * 0.005_f64.powi(2);
    let neck = Inertance {
        inertance_kg_m4: RHO * 0.05 / area,
        resistance_pa_s_m3: 0.0,
    };
    let vol = Volume {
        volume_m3: 1e-3,
        bulk_modulus_pa: RHO * C0 * C0,
    };
    let c = circuit(
        2,
        vec![
            (ElementKind::Inertance(neck), series(0, 1)),
            (ElementKind::Volume(vol), shunt(1)),
        ],
    );
    let plan = Plan::compile(&c).unwrap();
    let f_h = 269.2860392709671;
    let at = input_impedance(&plan, f_h).unwrap().norm();
    let scale = 2.0 * PI * f_h * neck.inertance_kg_m4;
    assert!(at < 1e-9 * scale, "|Zin(f_H)| = {at:e}");
    // Below f_H the pair is compliant (Im Z < 0), above it is massive.
    assert!(input_impedance(&plan, 0.9 * f_h).unwrap().im < 0.0);
    assert!(input_impedance(&plan, 1.1 * f_h).unwrap().im > 0.0);
}

/// An anechoic end makes Zin = Zc at every frequency and |P(x)| decays as
/// e^{−Re Γ x} (methods.md §8 case 6; follows from §2.1).
#[test]
fn anechoic_end_is_non_reflecting() {
    let props = line5(LineModel::Laminar);
    let l = 7.0;
    let mut c = circuit(
        2,
        vec![
            (tube(props, l), series(0, 1)),
            (
                ElementKind::Anechoic(ripline::elements::Anechoic { line: props }),
                shunt(1),
            ),
        ],
    );
    c.taps = vec![ripline::circuit::Tap {
        name: "x".into(),
        location: TapLocation::AlongTube {
            element: 0,
            distance_m: 3.3,
        },
    }];
    let plan = Plan::compile(&c).unwrap();
    for f in [3.0, 90.0, 1234.0] {
        let prop = props.propagation(2.0 * PI * f);
        let mut ws = plan.workspace();
        let sol = plan.solve(f, &[(0, C64::new(1.0, 0.0))], &mut ws).unwrap();
        assert!(rel(sol.node_pressures[0], prop.zc) < 1e-12);
        let p_x = ripline::analysis::ripple::tap_pressure(&c, &sol, c.taps[0].location);
        let want = sol.node_pressures[0].norm() * (-prop.gamma.re * 3.3).exp();
        assert!((p_x.norm() - want).abs() < 1e-12 * want);
    }
}

/// Splitting a tube with an internal node leaves the end values unchanged, and
/// a tap along the tube reads what the internal node reads (methods.md §8,
/// invariants; follows from T(a)·T(b) = T(a+b)).
#[test]
fn tap_along_a_tube_matches_an_internal_node() {
    let props = line5(LineModel::Laminar);
    let whole = {
        let mut c = circuit(
            2,
            vec![
                (tube(props, 3.0), series(0, 1)),
                (
                    ElementKind::LoadValve(LoadValve {
                        resistance_pa_s_m3: 2e10,
                    }),
                    shunt(1),
                ),
            ],
        );
        c.taps = vec![ripline::circuit::Tap {
            name: "t".into(),
            location: TapLocation::AlongTube {
                element: 0,
                distance_m: 1.1,
            },
        }];
        c
    };
    let split = circuit(
        3,
        vec![
            (tube(props, 1.1), series(0, 2)),
            (tube(props, 1.9), series(2, 1)),
            (
                ElementKind::LoadValve(LoadValve {
                    resistance_pa_s_m3: 2e10,
                }),
                shunt(1),
            ),
        ],
    );
    let (pw, ps) = (
        Plan::compile(&whole).unwrap(),
        Plan::compile(&split).unwrap(),
    );
    for f in [10.0, 333.0, 2000.0] {
        let (mut w1, mut w2) = (pw.workspace(), ps.workspace());
        let q = [(0, C64::new(1e-5, 0.0))];
        let a = pw.solve(f, &q, &mut w1).unwrap();
        let b = ps.solve(f, &q, &mut w2).unwrap();
        assert!(rel(a.node_pressures[0], b.node_pressures[0]) < 1e-10);
        assert!(rel(a.node_pressures[1], b.node_pressures[1]) < 1e-10);
        let tap = ripline::analysis::ripple::tap_pressure(&whole, &a, whole.taps[0].location);
        assert!(rel(tap, b.node_pressures[2]) < 1e-10, "{f} Hz");
    }
}
