//! Operating envelopes: quantities that follow the mean pressure and the oil
//! temperature of an envelope point, the bottomed damper, the true worst
//! speed and the verdicts against limits.

use ripline::analysis::ripple::harmonic_ripple;
use ripline::elements::ElementKind;
use ripline::network::Plan;

const BOTTOMED: &str = include_str!("circuits/damper_below_precharge.yaml");

/// The peak amplitude of every harmonic at every point of a circuit.
fn amplitudes(circuit: &ripline::Circuit) -> Vec<f64> {
    let plan = Plan::compile(circuit).unwrap();
    let report = harmonic_ripple(&plan, 0, circuit.harmonics).unwrap();
    report
        .taps
        .iter()
        .flat_map(|t| t.harmonics.iter().map(|h| h.pressure.norm()))
        .collect()
}

// Below its precharge (50 bar gauge against 120 bar gauge) a damper is
// bottomed: its gas is out of the circuit and only its neck remains, closed
// at the end (methods-2.md §2, common practice). The reference is the same
// circuit with the damper replaced by a closed side branch of the neck's
// length and bore with a rigid wall, whose admittance is the closed-tube
// tanh(Γl)/Zc (Kinsler et al., *Fundamentals of Acoustics*, ch. 10); every
// harmonic at every point must agree to round-off. The loader warns.
#[test]
fn a_damper_below_its_precharge_is_bottomed_and_warned_about() {
    let c = ripline::io::parse_circuit(BOTTOMED, "bottomed.yaml").unwrap();
    let i = c.element_id("damper").unwrap();
    let ElementKind::Damper(d) = &c.elements[i].kind else {
        panic!("not a damper")
    };
    assert!(d.is_bottomed());
    let warnings = ripline::diagnostics::circuit_warnings(&c, 1000.0);
    let w = warnings
        .iter()
        .find(|w| w.subject == "pulsation_damper `damper`")
        .expect("a bottomed-damper warning");
    assert!(w.message.contains("bottomed"), "{w}");
    assert!(
        w.message
            .contains("51.01 bar abs is below its precharge 121.01 bar abs"),
        "{w}"
    );

    let branch = BOTTOMED.replace(
        "    kind: pulsation_damper\n    at: pump_out\n    gas_volume: 0.17 L            # gas volume at the precharge\n    precharge: 120 bar gauge      # gas pressures say `abs` or `gauge`\n    operating_pressure: 50 bar gauge\n    polytropic_index: 1.4         # nitrogen, adiabatic ripple compression\n    neck_length: 32 mm\n    neck_bore: 20 mm\n",
        "    kind: side_branch\n    at: pump_out\n    length: 32 mm\n    bore: 20 mm\n    rigid: true\n",
    );
    assert_ne!(branch, BOTTOMED, "the damper section was replaced");
    let reference = ripline::io::parse_circuit(&branch, "branch.yaml").unwrap();
    let (a, b) = (amplitudes(&c), amplitudes(&reference));
    assert_eq!(a.len(), b.len());
    for (x, y) in a.iter().zip(&b) {
        assert!((x - y).abs() <= 1e-9 * y.max(1.0), "{x} against {y}");
    }
}
