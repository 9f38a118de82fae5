//! Speed sweeps against closed forms: a pump with a very stiff source (an
//! internal volume of 1 mm³) on a lossless rigid line finds its resonance
//! crossings where a harmonic k·z·n/60 meets a resonance of the line,
//! m·c/2L with the far end closed and (2m−1)·c/4L with it at constant
//! pressure (organ-pipe resonances; Kinsler et al., *Fundamentals of
//! Acoustics*, and methods.md §8 case 1).

use ripline::analysis::ripple::shaft_ripple;
use ripline::analysis::sweep::{SweepSettings, shaft_resonances, sweep};
use ripline::io::parse_circuit;
use ripline::network::Plan;
use ripline::source::shafts;

/// c = √(B/ρ) = √(1585575000/870) = 1350 m/s in a rigid line, L = 2 m.
fn line_circuit(far_end: &str) -> ripline::Circuit {
    let text = format!(
        "fluid: {{density: 870, bulk_modulus: 1585575000, viscosity: 32 cSt}}\n\
         line_model: lossless\n\
         harmonics: 3\n\
         pump:\n  node: a\n  speed: 1500 rpm\n  pumping_elements: 9\n\
         \x20 flow_ripple:\n\
         \x20   - {{harmonic: 1, amplitude: 1 L/min}}\n\
         \x20   - {{harmonic: 2, amplitude: 1 L/min}}\n\
         \x20   - {{harmonic: 3, amplitude: 1 L/min}}\n\
         \x20 source_impedance: {{volume: 1 mm3, leakage_resistance: 1e14}}\n\
         elements:\n\
         \x20 - {{name: line, kind: tube, from: a, to: b, length: 2 m, bore: 10 mm, rigid: true}}\n\
         \x20 - {{name: end, kind: {far_end}, at: b}}\n\
         taps:\n  - {{name: pump, node: a}}\n"
    );
    parse_circuit(&text, "line.yaml").unwrap()
}

fn settings() -> SweepSettings {
    SweepSettings {
        speeds_rev_s: (0..=115)
            .map(|i| (600.0 + 20.0 * f64::from(i)) / 60.0)
            .collect(),
        harmonics: 3,
        min_rise_db: 3.0,
    }
}

/// (harmonic k, ideal speed in rpm, exact speed of the amplitude maximum in
/// rpm). The ideal speeds are 60·f/(k·z) for the line resonances f; the
/// exact ones include the source's 1 mm³ and its leakage and come from
/// tests/oracles/pump_refs.py [4] (mpmath.findroot on d/dn log A, mp.dps 30).
const CLOSED: [(u32, f64, f64); 6] = [
    (1, 2250.0, 2249.98568124),
    (2, 1125.0, 1124.99284062),
    (2, 2250.0, 2249.98567742),
    (3, 750.0, 749.995227081),
    (3, 1500.0, 1499.99045161),
    (3, 2250.0, 2249.98567671),
];
const TANK: [(u32, f64, f64); 6] = [
    (1, 1125.0, 1124.99284827),
    (2, 1687.5, 1687.48925881),
    (2, 2812.5, 2812.4820962),
    (3, 1125.0, 1124.99283921),
    (3, 1875.0, 1874.98806414),
    (3, 2625.0, 2624.98328932),
];

fn check_crossings(far_end: &str, expected: &[(u32, f64, f64)]) {
    let circuit = line_circuit(far_end);
    let plan = Plan::compile(&circuit).unwrap();
    let shaft = &shafts(&circuit.pumps)[0];
    let mut calls = 0;
    let result = sweep(&plan, shaft, &settings(), &mut |_| calls += 1).unwrap();
    assert_eq!(calls, 116, "progress is reported once per speed");
    let found: Vec<(u32, f64)> = result
        .crossings
        .iter()
        .map(|c| (c.order, c.speed_rev_s * 60.0))
        .collect();
    assert_eq!(
        found.len(),
        expected.len(),
        "{far_end}: found {found:?}, expected {expected:?}"
    );
    for &(k, ideal, exact) in expected {
        let c = result
            .crossings
            .iter()
            .find(|c| c.order == k && (c.speed_rev_s * 60.0 - ideal).abs() < 1.0)
            .unwrap_or_else(|| panic!("{far_end}: no crossing of harmonic {k} near {ideal} rpm"));
        let rpm = c.speed_rev_s * 60.0;
        assert!((rpm - ideal).abs() < 1e-4 * ideal, "{far_end} k={k}: {rpm}");
        assert!(
            (rpm - exact).abs() < 1e-6 * exact,
            "{far_end} k={k}: {rpm} vs {exact}"
        );
        // the frequency is the line's resonance
        let f = f64::from(k) * 9.0 * ideal / 60.0;
        assert!((c.freq_hz - f).abs() < 1e-4 * f);
        assert!(c.rise_db > 40.0 && c.rise_db.is_finite(), "{}", c.rise_db);
        assert!(c.amplitude_pa.is_finite() && c.amplitude_pa > 0.0);
    }
}

#[test]
fn closed_far_end_crossings_are_at_m_c_over_2l() {
    check_crossings("closed_end", &CLOSED);
}

#[test]
fn constant_pressure_far_end_crossings_are_at_odd_quarter_waves() {
    check_crossings("tank", &TANK);
}

// The circuit's resonances as the pump excites them: peaks of P/Qs at
// m·c/2L = 337.5, 675, 1012.5 Hz (closed far end; Kinsler et al., methods.md
// §8 case 1), shifted below 1e-5 by the source's 1 mm³.
#[test]
fn resonance_frequencies_are_the_line_resonances() {
    let circuit = line_circuit("closed_end");
    let plan = Plan::compile(&circuit).unwrap();
    let shaft = &shafts(&circuit.pumps)[0];
    let found = shaft_resonances(&plan, shaft, 50.0, 1100.0, 3.0).unwrap();
    let freqs: Vec<f64> = found.iter().map(|r| r.freq_hz).collect();
    assert_eq!(freqs.len(), 3, "{freqs:?}");
    for (f, want) in freqs.iter().zip([337.5, 675.0, 1012.5]) {
        assert!((f - want).abs() < 1e-5 * want, "{f}");
    }
}

// The sweep's amplitudes are those of `solve` at the same speed.
#[test]
fn sweep_amplitudes_agree_with_the_harmonic_solve() {
    let circuit = line_circuit("tank");
    let plan = Plan::compile(&circuit).unwrap();
    let shaft = &shafts(&circuit.pumps)[0];
    let s = settings();
    let result = sweep(&plan, shaft, &s, &mut |_| {}).unwrap();
    let si = 37;
    let report = shaft_ripple(&plan, shaft, 3, s.speeds_rev_s[si]).unwrap();
    for (oi, h) in report.taps[0].harmonics.iter().enumerate() {
        assert_eq!(result.amplitude_pa(si, 0, oi), h.pressure.norm());
        assert_eq!(result.frequency_hz(si, oi), h.freq_hz);
    }
    // The worst speed is refined between the grid speeds: never below the
    // grid's largest rms, and its value is the solve at that speed.
    let worst = result.worst(0);
    assert!((0..s.speeds_rev_s.len()).all(|i| result.rms_pa(i, 0) <= worst.value_pa));
    let at = shaft_ripple(&plan, shaft, 3, worst.speed_rev_s).unwrap();
    assert!((at.taps[0].rms_pa() / worst.value_pa - 1.0).abs() < 1e-12);
}

// A pump on another shaft keeps its speed during the sweep: its ripple is
// the same at every swept speed and adds in power (methods.md §5: pumps at
// different speeds are solved separately and superposed).
#[test]
fn pumps_on_other_shafts_add_a_constant_mean_square() {
    let text = "fluid: {density: 870 kg/m3, bulk_modulus: 1.6 GPa, viscosity: 32 cSt}\n\
        harmonics: 4\n\
        pumps:\n\
        \x20 - {name: engine pump, node: a, speed: 1500 rpm, gear: {teeth: 12, module: 2 mm, face_width: 20 mm}, source_impedance: {volume: 0.05 L}}\n\
        \x20 - {name: motor pump, node: a, speed: 1450 rpm, piston: {pistons: 9, piston_diameter: 14 mm, pitch_radius: 28 mm, swash_angle: 15 deg}, source_impedance: {volume: 0.1 L}}\n\
        elements:\n\
        \x20 - {name: line, kind: tube, from: a, to: b, length: 2.5 m, bore: 12 mm, wall: 2 mm, material: steel}\n\
        \x20 - {name: load, kind: load_valve, at: b, resistance: 2e10}\n";
    let circuit = parse_circuit(text, "two.yaml").unwrap();
    let plan = Plan::compile(&circuit).unwrap();
    let all = shafts(&circuit.pumps);
    assert_eq!(all.len(), 2);
    let settings = SweepSettings {
        speeds_rev_s: (0..=20)
            .map(|i| (800.0 + 50.0 * f64::from(i)) / 60.0)
            .collect(),
        harmonics: 4,
        min_rise_db: 3.0,
    };
    let result = sweep(&plan, &all[0], &settings, &mut |_| {}).unwrap();
    let other = shaft_ripple(&plan, &all[1], 4, 1450.0 / 60.0).unwrap();
    for (pi, tap) in other.taps.iter().enumerate() {
        let want = tap.rms_pa().powi(2);
        assert!(want > 0.0);
        for si in [0, 7, 20] {
            let other = result.other_shafts_ms_pa2(si, pi);
            assert!((other - want).abs() < 1e-12 * want, "{other} vs {want}");
            let swept: f64 = (0..result.orders.len())
                .map(|o| result.amplitude_pa(si, pi, o).powi(2) / 2.0)
                .sum();
            let total = result.rms_pa(si, pi).powi(2);
            assert!((total - swept - want).abs() < 1e-9 * total);
        }
    }
}

// A turbulent line's damping follows its mean flow, which follows the pump
// speed (the mean-flow split of `meanflow`): the sweep's amplitudes at a
// speed are those of the circuit with the pumps set to that speed and its
// mean flows split again, as `solve --speed` does — not those of the
// circuit at its nominal speed. The engine example (an invented scenario)
// has such a line.
#[test]
fn turbulent_lines_follow_the_speed_in_a_sweep() {
    let path = std::path::Path::new(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/networks/loader_engine_pumps.yaml"
    ));
    let circuit = ripline::io::load_circuit(path).unwrap();
    let plan = Plan::compile(&circuit).unwrap();
    let shaft = &shafts(&circuit.pumps)[0];
    let speeds = vec![1000.0 / 60.0, 1500.0 / 60.0, 2100.0 / 60.0];
    let settings = SweepSettings {
        speeds_rev_s: speeds.clone(),
        harmonics: 2,
        min_rise_db: 3.0,
    };
    let result = sweep(&plan, shaft, &settings, &mut |_| {}).unwrap();
    for (si, &n) in speeds.iter().enumerate() {
        let mut at_n = circuit.clone();
        shaft.set_speed(&mut at_n.pumps, n);
        ripline::meanflow::resolve_line_mean_flows(&mut at_n);
        let plan_n = Plan::compile(&at_n).unwrap();
        let want = shaft_ripple(&plan_n, shaft, 2, n).unwrap();
        let nominal = shaft_ripple(&plan, shaft, 2, n).unwrap();
        for (pi, tap) in want.taps.iter().enumerate() {
            for (oi, h) in tap.harmonics.iter().enumerate() {
                assert_eq!(result.phasor(si, pi, oi), h.pressure);
            }
        }
        // at the work pump's outlet the nominal-speed damping gives another answer
        let (a, b) = (
            want.taps[0].harmonics[0].pressure.norm(),
            nominal.taps[0].harmonics[0].pressure.norm(),
        );
        assert!((a - b).abs() > 1e-6 * a, "{a} vs {b} at {} rpm", n * 60.0);
    }
}
