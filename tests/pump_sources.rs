//! Pump sources from geometry, source impedance forms and pumps on one
//! shaft, read through circuit files and checked against published closed
//! forms and tests/oracles/pump_refs.py (mpmath 1.3, mp.dps = 30; every mean
//! and Fourier coefficient there is an mpmath.quad integral of the waveform,
//! coded independently of the Rust model).

use ripline::C64;
use ripline::io::parse_circuit;
use ripline::source::{FlowRipple, KinematicRipple, Pump, SourceImpedance, shafts};
use std::f64::consts::PI;

/// A circuit around one pump section (YAML, indented as a `pump:` entry).
fn circuit_with(pump: &str) -> ripline::Circuit {
    let text = format!(
        "fluid: {{density: 870 kg/m3, bulk_modulus: 1.6 GPa, viscosity: 32 cSt}}\n\
         pump:\n  node: a\n{pump}\n\
         elements:\n\
         \x20 - {{name: line, kind: tube, from: a, to: b, length: 2 m, bore: 10 mm, rigid: true}}\n\
         \x20 - {{name: load, kind: load_valve, at: b, resistance: 1.5e10}}\n"
    );
    parse_circuit(&text, "test.yaml").unwrap_or_else(|e| panic!("{e}"))
}

fn kinematic(p: &Pump) -> &KinematicRipple {
    match &p.flow_ripple {
        FlowRipple::Kinematic(k) => k,
        other => panic!("not a kinematic ripple: {other:?}"),
    }
}

/// methods.md §5.1 worked example: m = 3 mm, z = 12, α = 20°, b = 20 mm,
/// addendum = m, 1500 rpm.
fn worked_gear() -> Pump {
    circuit_with(
        "  speed: 1500 rpm\n  gear: {teeth: 12, module: 3 mm, face_width: 20 mm, pressure_angle: 20 deg, addendum: 3 mm}\n  source_impedance: {volume: 0}",
    )
    .pumps
    .remove(0)
}

/// The flow's extremes over one pumping period, on a fine grid of the
/// instantaneous flow (independent of the model's own sampling).
fn extremes(k: &KinematicRipple, z: u32, speed: f64) -> (f64, f64) {
    let n = 200_000;
    (0..=n)
        .map(|i| k.flow_m3_s(2.0 * PI / f64::from(z) * i as f64 / n as f64, speed))
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), q| {
            (lo.min(q), hi.max(q))
        })
}

// Mean flow = geometric displacement × speed. Displacement of two identical
// spur gears 2π b (r_a² − r² − p_b²/12) (the classical formula, as in
// Ivantysyn & Ivantysynova 2001, recalled from memory; it follows from
// methods.md §5.1 by averaging the parabola). Reference values:
// tests/oracles/pump_refs.py [1], mean by mpmath.quad of the power-balance
// waveform: 3.470319169826109e-4 m³/s = displacement 1.388127667930444e-5
// m³/rev × 25 rev/s; methods.md §5.1 prints Q_mean = 3.47032e-4.
#[test]
fn gear_mean_flow_is_displacement_times_speed() {
    let pump = worked_gear();
    let k = kinematic(&pump);
    assert_eq!(pump.pumping_elements, 12);
    let disp = pump.displacement_m3.unwrap();
    assert!(
        (disp - 1.388_127_667_930_444e-5).abs() < 1e-12 * disp,
        "{disp:e}"
    );
    let mean = k.mean_flow_m3_s(25.0);
    assert!(
        (mean - 3.470_319_169_826_109e-4).abs() < 1e-9 * mean,
        "{mean:e}"
    );
    assert!((mean - disp * 25.0).abs() < 1e-9 * mean);
    assert!((mean - 3.47032e-4).abs() < 1e-9); // methods.md, 6 digits
}

// Kinematic ripple peak-to-peak ΔQ = b ω p_b²/4 (closed form of
// methods.md §5.1 from the length-of-action model of Manring & Kasaragadda
// 2003) = 6.160327046218468e-5 m³/s, δ = ΔQ/Q_mean = 0.1775147110323904
// (pump_refs.py [1]; methods.md: δ = 0.1775).
#[test]
fn gear_ripple_peak_to_peak_matches_the_closed_form() {
    let pump = worked_gear();
    let k = kinematic(&pump);
    let (lo, hi) = extremes(k, 12, 25.0);
    let dq = 6.160_327_046_218_468e-5;
    assert!(((hi - lo) - dq).abs() < 1e-8 * dq, "{:e}", hi - lo);
    assert!((hi - 3.675_663_404_700_058e-4).abs() < 1e-12, "{hi:e}");
    assert!((k.non_uniformity() - 0.177_514_711_032_390_4).abs() < 1e-9);
    assert!((k.non_uniformity() - 0.1775).abs() < 5e-5);
}

// Harmonic k of the parabola: (−1)^{k+1} 4ΔQ/(π² k²), real (the flow peaks
// at θ = 0); k = 1: 2.496686511787046e-5, k = 10: −2.496686511787046e-7,
// k = 50: −9.986746047148186e-9 m³/s (pump_refs.py [1], mpmath.quad; the
// closed form agrees to all digits). The model's attenuated DFT
// (src/source/kinematic.rs) is exact for this piecewise parabola.
#[test]
fn gear_harmonics_match_the_fourier_series_of_the_parabola() {
    let pump = worked_gear();
    let k = kinematic(&pump);
    for (order, want, tol) in [
        (1, 2.496_686_511_787_046e-5, 1e-12),
        (2, -6.241_716_279_467_616e-6, 1e-12),
        (3, 2.774_096_124_207_829e-6, 1e-12),
        (10, -2.496_686_511_787_046e-7, 1e-11),
        (50, -9.986_746_047_148_186e-9, 1e-10),
    ] {
        let q = k.harmonic(order, 25.0);
        assert!((q.re - want).abs() < tol * want.abs(), "k = {order}: {q}");
        assert!(q.im.abs() < 1e-9 * want.abs(), "k = {order}: {q}");
    }
    // at another speed everything scales in proportion
    assert!((k.harmonic(1, 50.0) - k.harmonic(1, 25.0) * 2.0).norm() < 1e-18);
}

fn piston_pump(z: u32, extra: &str) -> Pump {
    circuit_with(&format!(
        "  speed: 1500 rpm\n  piston: {{pistons: {z}, piston_diameter: 16 mm, pitch_radius: 30 mm, swash_angle: 17 deg{extra}}}\n  source_impedance: {{volume: 0.1 L}}"
    ))
    .pumps
    .remove(0)
}

// Flow non-uniformity of z pistons: odd z (π/2z) tan(π/4z), even z
// (π/z) tan(π/2z) (Ivantysyn & Ivantysynova 2001, as recalled in
// methods.md §5.2); published check values z = 7/8/9 → 0.025284 /
// 0.078113 / 0.015270 (methods.md), 16 digits from pump_refs.py [2].
// Order 18 of z = 9 (harmonic 2): |Q|/Q_mean = 2/(18² − 1) = 6.1920e-3.
#[test]
fn piston_ripple_fraction_for_odd_and_even_z() {
    for (z, published, exact) in [
        (7, 0.025284, 0.025_283_748_589_182_37),
        (8, 0.078113, 0.078_112_704_008_510_95),
        (9, 0.015270, 0.015_269_652_366_968_45),
    ] {
        let pump = piston_pump(z, "");
        let k = kinematic(&pump);
        let mean = k.mean_flow_m3_s(25.0);
        let (lo, hi) = extremes(k, z, 25.0);
        let delta = (hi - lo) / mean;
        assert!((delta - exact).abs() < 1e-8, "z = {z}: {delta}");
        assert!((delta - published).abs() < 5e-7, "z = {z}: {delta}");
        assert!((k.non_uniformity() - exact).abs() < 1e-9, "z = {z}");
    }
    let pump = piston_pump(9, "");
    let k = kinematic(&pump);
    let mean = k.mean_flow_m3_s(25.0);
    let h2 = k.harmonic(2, 25.0).norm() / mean;
    assert!((h2 - 2.0 / (18.0 * 18.0 - 1.0)).abs() < 1e-8, "{h2}");
    assert!((h2 - 6.1920e-3).abs() < 5e-8);
    // odd z: the kinematic ripple has no odd harmonics of f_p (pump_refs.py
    // [2]: |Q_1|/Q_mean = 2e-31 by mpmath.quad); z = 8 has them, 2/(8²−1)
    assert!(k.harmonic(1, 25.0).norm() < 1e-12 * mean);
    let k8 = piston_pump(8, "");
    let k8 = kinematic(&k8);
    let h1 = k8.harmonic(1, 25.0).norm() / k8.mean_flow_m3_s(25.0);
    assert!((h1 - 2.0 / 63.0).abs() < 1e-8, "{h1}");
}

// Pre-compression backflow pulse, ΔV = V_c Δp/B = 6 cm³ × 400 bar / 1.6 GPa
// = 0.15 cm³ per piston, 12° wide, starting 2° after bottom dead centre:
// harmonics Q_k/ω by mpmath.quad of the same pulse train
// (pump_refs.py [3]); mean/ω = 5.068167002431592e-6 m³/rad, i.e. the
// kinematic mean less z ΔV per revolution.
#[test]
fn precompression_pulse_harmonics_match_the_oracle() {
    let pump = piston_pump(
        9,
        ", precompression: {cylinder_volume: 6 cm3, pressure_rise: 400 bar, duration: 12 deg, delay: 2 deg}",
    );
    let k = kinematic(&pump);
    let omega = 2.0 * PI * 25.0;
    let mean = k.mean_flow_m3_s(25.0) / omega;
    assert!(
        (mean - 5.068_167_002_431_592e-6).abs() < 1e-9 * mean,
        "{mean:e}"
    );
    for (order, re, im) in [
        (1, -1.219_565_053_461_111e-7, 3.753_435_287_551_52e-7),
        (2, 2.114_459_149_526_985e-7, 1.773_912_805_034_344e-7),
        (3, 1.476_045_848_412_695e-7, -1.072_410_082_157_577e-7),
    ] {
        let q = k.harmonic(order, 25.0) / omega;
        let want = C64::new(re, im);
        assert!((q - want).norm() < 1e-5 * want.norm(), "k = {order}: {q}");
    }
    // the pulse brings in odd harmonics of f_p that the kinematics lack
    assert!(k.harmonic(1, 25.0).norm() > 1e-3 * k.mean_flow_m3_s(25.0));
}

/// DFT over one whole revolution, in the test (no FFT library): the
/// coefficient of shaft order m of the flow sampled at `n` angles.
fn revolution_dft(k: &KinematicRipple, speed: f64, m: u32, n: usize) -> C64 {
    let mut sum = C64::new(0.0, 0.0);
    for i in 0..n {
        let theta = 2.0 * PI * i as f64 / n as f64;
        sum += C64::from_polar(k.flow_m3_s(theta, speed), -f64::from(m) * theta);
    }
    sum * (2.0 / n as f64)
}

// The spectrum holds only multiples of the pumping frequency: over a whole
// revolution the flow of z equally spaced pumping elements has no shaft
// order that is not a multiple of z (periodicity 2π/z; Fourier series,
// common practice). Checked on a gear pump mounted off its reference and on
// a piston pump with the pre-compression pulse; the multiples agree with
// the model's harmonics.
#[test]
fn spectrum_holds_only_multiples_of_the_pumping_frequency() {
    let gear = circuit_with(
        "  speed: 1500 rpm\n  shaft_angle: 7 deg\n  gear: {teeth: 11, module: 2.5 mm, face_width: 18 mm}\n  source_impedance: {volume: 0}",
    )
    .pumps
    .remove(0);
    let piston = piston_pump(
        7,
        ", precompression: {cylinder_volume: 5 cm3, pressure_rise: 100 bar, duration: 15 deg, delay: -3 deg}",
    );
    for pump in [&gear, &piston] {
        let k = kinematic(pump);
        let z = pump.pumping_elements;
        let n = 4000 * z as usize;
        let mean = k.mean_flow_m3_s(25.0);
        for m in 1..=3 * z + 1 {
            let c = revolution_dft(k, 25.0, m, n);
            if m % z == 0 {
                // the plain sum here aliases by ~2k²/N² (N = 4000 per period)
                let want = k.harmonic(m / z, 25.0);
                assert!(
                    (c - want).norm() < 1e-6 * want.norm(),
                    "z = {z}, order {m}: {c} vs {want}"
                );
                assert!(want.norm() > 1e-4 * mean);
            } else {
                assert!(c.norm() < 1e-12 * mean, "z = {z}, order {m}: {c}");
            }
        }
    }
}

// Form c of the source impedance (methods.md §5; Edge & Johnston 1990):
// Zs = R_p + jωL_p + 1/(jωC + 1/R_leak) with V = 0.1 L, B = 1.6 GPa,
// R_leak = 1.2e12, R_p = 5e7, L_p = 5e5 at 225 Hz. numpy 2.4:
// w = 2*np.pi*225; 5e7 + 1j*w*5e5 + 1/(1j*w*6.25e-14 + 1/1.2e12)
// = 156732164.513856 − 10609819860.865564j.
#[test]
fn source_impedance_with_a_passage() {
    let pump = circuit_with(
        "  speed: 1500 rpm\n  pumping_elements: 9\n  flow_ripple: [{harmonic: 1, amplitude: 1 L/min}]\n  source_impedance: {volume: 0.1 L, leakage_resistance: 1.2e12, passage_resistance: 5e7, passage_inertance: 5e5 kg/m4}",
    )
    .pumps
    .remove(0);
    assert!(matches!(
        pump.source_impedance,
        SourceImpedance::VolumePassage { .. }
    ));
    let z = pump.source_impedance.admittance(2.0 * PI * 225.0).inv();
    let want = C64::new(156_732_164.513_856, -10_609_819_860.865_564);
    assert!((z - want).norm() < 1e-9 * want.norm(), "{z}");
    // no volume and no leakage: an ideal flow source whatever the passage
    let ideal = circuit_with(
        "  speed: 1500 rpm\n  pumping_elements: 9\n  flow_ripple: [{harmonic: 1, amplitude: 1 L/min}]\n  source_impedance: {volume: 0, passage_inertance: 5e5}",
    )
    .pumps
    .remove(0);
    assert_eq!(
        ideal.source_impedance.admittance(1000.0),
        C64::new(0.0, 0.0)
    );
}

// An inline table of Zs: the same interpolation as a source file's table
// (linear in amplitude and unwrapped phase, ends held).
#[test]
fn source_impedance_as_an_inline_table() {
    let pump = circuit_with(
        "  speed: 1500 rpm\n  pumping_elements: 9\n  flow_ripple: [{harmonic: 1, amplitude: 1 L/min}]\n  source_impedance:\n    table:\n      - {frequency: 100 Hz, amplitude: 2e10, phase: -80 deg}\n      - {frequency: 300 Hz, amplitude: 1e10, phase: -90 deg}",
    )
    .pumps
    .remove(0);
    let zs = |f: f64| pump.source_impedance.admittance(2.0 * PI * f).inv();
    let mid = zs(200.0);
    assert!((mid.norm() - 1.5e10).abs() < 1e-3);
    assert!((mid.arg().to_degrees() + 85.0).abs() < 1e-9);
    assert!((zs(50.0) - C64::from_polar(2e10, -80f64.to_radians())).norm() < 1e-3);
}

// Two identical gear sections on one shaft, the second turned by half a
// tooth pitch (15° for z = 12), feeding one node: by the shift theorem of
// Fourier series its harmonic k is multiplied by e^{−jkπ}, so the odd
// harmonics cancel and the even ones double (common practice for tandem
// pumps).
#[test]
fn tandem_sections_half_a_pitch_apart_cancel_odd_harmonics() {
    let text = "fluid: {density: 870 kg/m3, bulk_modulus: 1.6 GPa, viscosity: 32 cSt}\n\
        pumps:\n\
        \x20 - {name: front, node: a, shaft: drive, speed: 1500 rpm, gear: {teeth: 12, module: 3 mm, face_width: 20 mm}, source_impedance: {volume: 0.05 L}}\n\
        \x20 - {name: rear, node: a, shaft: drive, speed: 1500 rpm, shaft_angle: 15 deg, gear: {teeth: 12, module: 3 mm, face_width: 20 mm}, source_impedance: {volume: 0.05 L}}\n\
        elements:\n\
        \x20 - {name: line, kind: tube, from: a, to: b, length: 2 m, bore: 10 mm, rigid: true}\n\
        \x20 - {name: load, kind: load_valve, at: b, resistance: 1.5e10}\n";
    let c = parse_circuit(text, "tandem.yaml").unwrap();
    let all = shafts(&c.pumps);
    assert_eq!(all.len(), 1);
    assert_eq!(all[0].name, "drive");
    assert_eq!(all[0].orders(&c.pumps, 4), vec![1, 2, 3, 4]);
    let single = c.pumps[0].flow_ripple(1).norm();
    let mut inj = Vec::new();
    for order in 1..=4 {
        all[0].injections(&c.pumps, order, 10, 25.0, &mut inj);
        assert_eq!(inj.len(), 1, "both sections feed node a");
        let one = c.pumps[0].flow_ripple(order);
        if order % 2 == 1 {
            assert!(inj[0].1.norm() < 1e-12 * single, "order {order}");
        } else {
            assert!(
                (inj[0].1 - one * 2.0).norm() < 1e-12 * single,
                "order {order}"
            );
        }
    }
}

// Pumps with different numbers of teeth on one shaft: the shaft
// fundamental is n·gcd(z₁, z₂), and each pump's harmonic k sits at order
// k·z/gcd (for 9 and 12 pistons/teeth: g = 3).
#[test]
fn mixed_pumps_on_a_shaft_share_the_gcd_fundamental() {
    let c = ripline::io::load_circuit(std::path::Path::new(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/networks/loader_engine_pumps.yaml"
    )))
    .unwrap();
    let s = &shafts(&c.pumps)[0];
    assert_eq!(s.fundamental_elements, 3);
    assert_eq!(s.orders(&c.pumps, 3), vec![3, 4, 6, 8, 9, 12]);
    let mut inj = Vec::new();
    s.injections(&c.pumps, 12, 3, 30.0, &mut inj);
    // order 12 = harmonic 4 of the 9-piston pump (beyond 3: left out) and
    // harmonic 3 of the 12-tooth pump
    assert_eq!(inj.len(), 1);
    assert_eq!(inj[0].1, c.pumps[1].flow_ripple_at(3, 30.0));
}
