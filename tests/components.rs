//! The components with dynamics read from circuit files and solved in
//! circuits: relief and check valves, cylinders, in-line dampers, expansion
//! chambers with inlet and outlet geometry, valve blocks and hoses whose
//! wall follows the mean pressure. Each check names the hand value or the
//! closed form it compares with.

use ripline::analysis::search::golden_section_max;
use ripline::analysis::silencer::{Chain, transmission_loss_db};
use ripline::analysis::tune::{
    Bound, Objective, Parameter, RippleEvaluator, SearchSettings, TuneProblem, speed_conditions,
};
use ripline::circuit::{Circuit, TapLocation};
use ripline::elements::{CheckState, ElementKind};
use ripline::io::parse_circuit;
use ripline::network::Plan;
use ripline::{C64, diagnostics};
use std::f64::consts::PI;

const FLUID: &str = "fluid: {density: 870 kg/m3, bulk_modulus: 1.6 GPa, viscosity: 32 cSt}\n";

/// A 9-element pump at node `p` with one harmonic, for the circuits below.
const PUMP: &str = "\
pump:
  node: p
  speed: 1500 rpm
  pumping_elements: 9
  flow_ripple: [{harmonic: 1, amplitude: 1 L/min}]
  source_impedance: {volume: 0.1 L}
";

fn with_pump(elements: &str) -> String {
    format!("{PUMP}{elements}")
}

fn circuit(body: &str) -> Circuit {
    parse_circuit(&format!("{FLUID}{body}"), "test.yaml").unwrap()
}

fn kind<'c>(c: &'c Circuit, name: &str) -> &'c ElementKind {
    &c.elements[c.element_id(name).unwrap()].kind
}

const RELIEF: &str = "\
pump:
  node: p
  speed: 1200 rpm
  speed_range: [700 rpm, 1800 rpm]
  pumping_elements: 12
  flow_ripple: [{harmonic: 1, amplitude: 1 L/min}, {harmonic: 2, amplitude: 0.3 L/min}]
  source_impedance: {volume: 0.1 L}
harmonics: 2
elements:
  - {name: line, kind: tube, from: p, to: v, length: 1 m, bore: 16 mm, rigid: true}
  - name: relief
    kind: relief_valve
    at: v
    cracking_pressure: 190 bar
    pressure_drop: 200 bar
    mean_flow: 15 L/min
    mass: 18 g
    spring_rate: 45 N/mm
    damping: 4 N·s/m
    feedback_area: 50 mm2
";

// Hand linearisation (no flow force): x̄ = A(p̄ − p_c)/k = 5e-5·1e6/45e3
// = 1.1111e-3 m; K_q = Q̄/x̄ = 2.5e-4/1.1111e-3 = 0.225 m²/s; K_c = Q̄/(2p̄)
// = 2.5e-4/4e7 = 6.25e-12 m³/(s·Pa); f_n = √(k/m)/2π = √(2.5e6)/2π
// = 251.65 Hz (Merritt 1967 ch. 5 orifice and poppet equations).
#[test]
fn relief_valve_is_linearised_as_by_hand() {
    let c = circuit(RELIEF);
    let ElementKind::ReliefValve(v) = kind(&c, "relief") else {
        panic!("not a relief valve")
    };
    assert!(!v.in_line);
    assert!((v.opening_m / 1.111_111e-3 - 1.0).abs() < 1e-6);
    assert!((v.poppet.flow_gain_m2_s / 0.225 - 1.0).abs() < 1e-9);
    assert!((v.poppet.flow_pressure_coefficient / 6.25e-12 - 1.0).abs() < 1e-9);
    assert!((v.poppet.natural_frequency_hz() - 251.646).abs() < 1e-3);
    // The network stamps it as a shunt: the pressure at its node for a
    // unit flow injected there equals 1/(Y_line_end + Y_valve).
    let plan = Plan::compile(&c).unwrap();
    let mut ws = plan.workspace();
    let v_node = c.node_id("v").unwrap();
    let f = 300.0;
    let s = plan
        .solve(f, &[(v_node, C64::new(1.0, 0.0))], &mut ws)
        .unwrap();
    let q_valve = s.end_flows[c.element_id("relief").unwrap()].unwrap().0;
    let want = v.poppet.admittance(2.0 * PI * f) * s.node_pressures[v_node];
    assert!((q_valve - want).norm() < 1e-12 * want.norm());
}

// The warning names the harmonics that meet f_n = 251.65 Hz over
// 700..1800 rpm with 12 pumping elements: harmonic 1 (140..360 Hz) crosses
// it at 251.646/12·60 = 1258 rpm; harmonic 2 (280..720 Hz) starts 11.3 %
// above it, outside the 10 % margin. The valve is lightly damped
// (A b = 2e-4 < K_q m = 4.05e-3), so it also has negative resistance.
#[test]
fn relief_valve_resonance_is_flagged_against_the_pump_harmonics() {
    let c = circuit(RELIEF);
    let w = diagnostics::component_warnings(&c);
    let text: Vec<String> = w.iter().map(|w| w.to_string()).collect();
    assert!(
        text.iter().any(|t| t.contains("natural frequency 251.6 Hz")
            && t.contains("harmonic 1 crosses it at 1258 rpm")
            && !t.contains("harmonic 2")),
        "{text:#?}"
    );
    assert!(
        text.iter().any(|t| t.contains("negative resistance")),
        "{text:#?}"
    );
    // A well-damped poppet (ζ ≥ 1/√2) has no resonance peak and A b ≥ K_q m
    // leaves no negative resistance: no warning.
    let damped = circuit(&RELIEF.replace("damping: 4 N·s/m", "damping: 200 N·s/m"));
    assert!(diagnostics::component_warnings(&damped).is_empty());
    // They also reach every other command through circuit_warnings.
    assert!(diagnostics::circuit_warnings(&c, 1000.0).len() >= 2);
    // `tune` can size the poppet's damping; at ω_n the admittance is then
    // K_c + (K_q + jω_n A)A/(jω_n b) with the new b (by hand from Y).
    let relief = kind(&c, "relief");
    assert_eq!(Parameter::for_kind(relief), [Parameter::Damping]);
    let tuned = Parameter::Damping.apply(relief, 60.0, &c.fluid).unwrap();
    let ElementKind::ReliefValve(v) = &tuned else {
        panic!()
    };
    assert_eq!(Parameter::Damping.value(&tuned), Some(60.0));
    let w = 2.0 * PI * v.poppet.natural_frequency_hz();
    let (a, kq, kc) = (5e-5, 0.225, 6.25e-12);
    let want = kc + C64::new(kq, w * a) * a / C64::new(0.0, w * 60.0);
    assert!((v.poppet.admittance(w) - want).norm() < 1e-9 * want.norm());
}

// The oil-column resonance of a cylinder in a circuit: an ideal flow source
// at the cap port, the rod port closed. The pressure at the cap port per
// unit flow, 1/Y_in with Y_in = det Y/Y22, peaks where det Y = 0, i.e. at
// ω_h = √(k_h/M), k_h = B(A₁²/V₁ + A₂²/V₂) (methods-2 §3; Merritt 1967
// ch. 6). Hand value for 80/45 mm at 200 mm of 600 mm, 0.05 L dead volume,
// 2 t, B = 1.6 GPa: 25.556 Hz.
#[test]
fn cylinder_resonance_in_a_circuit_is_the_oil_column_hand_value() {
    let c = circuit(
        "\
pump:
  node: cap
  speed: 1500 rpm
  pumping_elements: 9
  flow_ripple: [{harmonic: 1, amplitude: 1 L/min}]
  source_impedance: {volume: 0}
elements:
  - name: boom
    kind: cylinder
    from: cap
    to: rod
    bore: 80 mm
    rod_diameter: 45 mm
    stroke: 600 mm
    position: 200 mm
    dead_volume: 0.05 L
    load_mass: 2 t
    load_damping: 300 N·s/m
  - {name: rod end, kind: closed_end, at: rod}
",
    );
    let ElementKind::Cylinder(cyl) = kind(&c, "boom") else {
        panic!()
    };
    assert!((cyl.natural_frequency_hz() - 25.556).abs() < 1e-3);
    let plan = Plan::compile(&c).unwrap();
    let mut ws = plan.workspace();
    let (f_peak, _) = golden_section_max(
        |f| {
            plan.solve(f, &[(0, C64::new(1.0, 0.0))], &mut ws)
                .map_or(f64::INFINITY, |s| s.node_pressures[0].norm())
        },
        20.0,
        30.0,
        80,
    );
    assert!((f_peak / 25.556 - 1.0).abs() < 1e-3, "{f_peak}");
}

const CHECK: &str = "\
elements:
  - {name: up, kind: tube, from: p, to: a, length: 1 m, bore: 12 mm, rigid: true}
  - name: check
    kind: check_valve
    from: a
    to: b
    cracking_pressure: 0.5 bar
    full_open_pressure: 3 bar
    PRESSURE
    mean_flow: 20 L/min
    mass: 10 g
    spring_rate: 2 N/mm
    feedback_area: 80 mm2
    damping: 5 N·s/m
  - {name: down, kind: tube, from: b, to: c, length: 1 m, bore: 12 mm, rigid: true}
  - {name: load, kind: load_valve, at: c, resistance: 4e10}
";

// A check valve held shut is a closed end on both sides: nothing reaches
// the far side. Fully open it is the orifice R = 2Δp̄/Q̄ (the turbulent
// orifice linearised, common practice): here 2·4e5/3.333e-4 = 2.4e9
// Pa·s/m³, so the circuit solves as with that orifice.
#[test]
fn check_valve_states_from_the_operating_point() {
    let closed = circuit(&with_pump(
        &CHECK
            .replace("PRESSURE", "pressure_drop: -20 bar")
            .replace("    mean_flow: 20 L/min\n", ""),
    ));
    assert!(matches!(
        kind(&closed, "check"),
        ElementKind::CheckValve(v) if v.state == CheckState::Closed
    ));
    let plan = Plan::compile(&closed).unwrap();
    let mut ws = plan.workspace();
    let s = plan
        .solve(150.0, &[(0, C64::new(1e-5, 0.0))], &mut ws)
        .unwrap();
    assert!(s.node_pressures[0].norm() > 0.0);
    assert_eq!(
        s.node_pressures[closed.node_id("c").unwrap()],
        C64::new(0.0, 0.0)
    );

    let full = circuit(&with_pump(
        &CHECK.replace("PRESSURE", "pressure_drop: 4 bar"),
    ));
    let orifice = circuit(&with_pump(
        &CHECK.replace(
            "  - name: check\n    kind: check_valve\n    from: a\n    to: b\n    cracking_pressure: 0.5 bar\n    full_open_pressure: 3 bar\n    PRESSURE\n    mean_flow: 20 L/min\n    mass: 10 g\n    spring_rate: 2 N/mm\n    feedback_area: 80 mm2\n    damping: 5 N·s/m\n",
            "  - {name: check, kind: orifice, from: a, to: b, resistance: 2.4e9}\n",
        ),
    ));
    for c in [&full, &orifice] {
        assert_eq!(c.elements.len(), 4);
    }
    let solve = |c: &Circuit| {
        let plan = Plan::compile(c).unwrap();
        let mut ws = plan.workspace();
        plan.solve(150.0, &[(0, C64::new(1e-5, 0.0))], &mut ws)
            .unwrap()
            .node_pressures
    };
    let (a, b) = (solve(&full), solve(&orifice));
    for (x, y) in a.iter().zip(&b) {
        assert!((x - y).norm() < 1e-9 * y.norm().max(1.0), "{x} vs {y}");
    }
    // Between cracking and full opening the poppet floats on its spring.
    let opening = circuit(&with_pump(
        &CHECK.replace("PRESSURE", "pressure_drop: 1.5 bar"),
    ));
    assert!(matches!(
        kind(&opening, "check"),
        ElementKind::CheckValve(v) if matches!(v.state, CheckState::Opening { .. })
    ));
}

// A valve block with one drilled gallery is that rigid tube: the circuit
// solves identically, its junction is a node named `<block>.<junction>`
// that a tap can read, and its gallery is an element named
// `<block>.<gallery>`.
#[test]
fn valve_block_expands_into_named_galleries() {
    let pump = "\
pump:
  node: p
  speed: 1500 rpm
  pumping_elements: 9
  flow_ripple: [{harmonic: 1, amplitude: 1 L/min}, {harmonic: 3, amplitude: 0.2 L/min}]
  source_impedance: {volume: 0.1 L}
harmonics: 3
";
    let block = circuit(&format!(
        "{pump}elements:
  - {{name: feed, kind: tube, from: p, to: in, length: 2 m, bore: 12 mm, wall: 2 mm, material: steel}}
  - name: lift block
    kind: valve_block
    ports: {{P: in, A: out}}
    galleries:
      - {{from: P, to: spool, length: 80 mm, bore: 10 mm}}
      - {{name: work, from: spool, to: A, length: 50 mm, bore: 10 mm}}
    cavities:
      - {{at: spool, volume: 0.05 L}}
  - {{name: load, kind: load_valve, at: out, resistance: 3e10}}
taps:
  - {{name: spool, node: lift block.spool}}
  - {{name: in the gallery, element: lift block.work, distance: 25 mm}}
"
    ));
    let plain = circuit(&format!(
        "{pump}elements:
  - {{name: feed, kind: tube, from: p, to: in, length: 2 m, bore: 12 mm, wall: 2 mm, material: steel}}
  - {{name: g1, kind: tube, from: in, to: s, length: 80 mm, bore: 10 mm, rigid: true}}
  - {{name: g2, kind: tube, from: s, to: out, length: 50 mm, bore: 10 mm, rigid: true}}
  - {{name: cavity, kind: volume, at: s, volume: 0.05 L}}
  - {{name: load, kind: load_valve, at: out, resistance: 3e10}}
"
    ));
    let names: Vec<&str> = block.elements.iter().map(|e| e.name.as_str()).collect();
    assert_eq!(
        names,
        [
            "feed",
            "lift block.P-spool",
            "lift block.work",
            "lift block.spool cavity",
            "load"
        ]
    );
    assert!(block.node_id("lift block.spool").is_some());
    for f in [125.0, 375.0, 2000.0] {
        let solve = |c: &Circuit| {
            let plan = Plan::compile(c).unwrap();
            let mut ws = plan.workspace();
            plan.solve(f, &[(0, C64::new(1e-5, 0.0))], &mut ws).unwrap()
        };
        let (sb, sp) = (solve(&block), solve(&plain));
        let spool = sb.node_pressures[block.node_id("lift block.spool").unwrap()];
        let s = sp.node_pressures[plain.node_id("s").unwrap()];
        assert!((spool - s).norm() < 1e-9 * s.norm(), "{f} Hz");
    }
    assert!(matches!(
        block.taps[1].location,
        TapLocation::AlongTube { .. }
    ));
}

const DAMPER: &str = "\
elements:
  - {name: up, kind: tube, from: p, to: a, length: 1 m, bore: 16 mm, rigid: true}
  - name: damper
    kind: inline_pulsation_damper
    from: a
    to: b
    gas_volume: 0.5 L
    precharge: 100 bar abs
    operating_pressure: 200 bar abs
    oil_volume: 0.2 L
    port_length: 1 mm
    port_bore: 16 mm
  - {name: down, kind: tube, from: b, to: t, length: 1 m, bore: 16 mm, rigid: true}
  - {name: load, kind: load_valve, at: t, resistance: 4e10}
";

// An in-line damper with short ports is a lumped compliance on the line:
// TL = 10 log10(1 + (ωCZ0/2)²) between pipes of impedance Z0 (the shunt
// formula, Munjal, Acoustics of Ducts and Mufflers, 2014, ch. 3), with
// C = V₀p₀/(κp_m²) + (V₀ − V₀p₀/p_m + V_oil)/B (Boyle, then polytropic;
// methods-2 §2): V₀ = 0.5 L, p₀ = 100 bar abs, p_m = 200 bar abs, κ = 1.4,
// V_oil = 0.2 L.
#[test]
fn inline_damper_attenuates_as_a_compliance() {
    let c = circuit(&with_pump(DAMPER));
    let ElementKind::InlineDamper(d) = kind(&c, "damper") else {
        panic!()
    };
    let cc = 0.25e-3 / (1.4 * 200e5) + (0.25e-3 + 0.2e-3) / 1.6e9;
    assert!((d.compliance() / cc - 1.0).abs() < 1e-12);
    let z0 = 870.0 * (1.6e9f64 / 870.0).sqrt() / (PI * 0.008 * 0.008);
    let chain = Chain::new(&c, &[c.element_id("damper").unwrap()]).unwrap();
    for f in [0.5, 2.0, 20.0] {
        let t = chain.transfer(&c, f).unwrap();
        let w = 2.0 * PI * f;
        let want = 10.0 * (1.0 + (w * cc * z0 / 2.0).powi(2)).log10();
        let got = transmission_loss_db(&t, z0, z0);
        assert!((got - want).abs() < 1e-3, "{f} Hz: {got} vs {want}");
    }
    assert!(diagnostics::component_warnings(&c).is_empty());
    // Precharged above the operating pressure it is bottomed: the gas is
    // out, C = V_oil/B only, and a warning says so.
    let bottomed = circuit(&with_pump(&DAMPER.replace("100 bar abs", "250 bar abs")));
    let ElementKind::InlineDamper(d) = kind(&bottomed, "damper") else {
        panic!()
    };
    assert!((d.compliance() / (0.2e-3 / 1.6e9) - 1.0).abs() < 1e-12);
    let w = diagnostics::component_warnings(&bottomed);
    assert!(w[0].to_string().contains("bottomed"), "{w:?}");
}

// `tune` sizes the inlet extension of an expansion chamber: the annulus
// behind an extended inlet is a closed side branch whose quarter-wave notch
// c/(4e) (Kinsler et al., Fundamentals of Acoustics, 2000, ch. 10) removes
// the harmonic downstream; for 900 Hz and c = √(B/ρ) = 1356.1 m/s the best
// extension is e = c/(4f) = 0.3767 m (laminar friction moves it by far less
// than the 1 % allowed).
#[test]
fn tune_places_the_annulus_notch_of_an_extended_inlet_on_the_harmonic() {
    let c = circuit(
        "\
pump:
  node: p
  speed: 6000 rpm
  pumping_elements: 9
  flow_ripple: [{harmonic: 1, amplitude: 1 L/min}]
  source_impedance: {volume: 0.1 L}
harmonics: 1
elements:
  - {name: up, kind: tube, from: p, to: a, length: 1 m, bore: 16 mm, rigid: true}
  - name: chamber
    kind: expansion_chamber
    from: a
    to: b
    length: 0.6 m
    bore: 80 mm
    rigid: true
    port_bore: 16 mm
    port_length: 20 mm
    inlet_extension: 0.25 m
  - {name: down, kind: tube, from: b, to: t, length: 1 m, bore: 16 mm, rigid: true}
  - {name: end, kind: anechoic_end, at: t}
taps:
  - {name: downstream, node: t}
",
    );
    let chamber = c.element_id("chamber").unwrap();
    assert_eq!(
        Parameter::for_kind(&c.elements[chamber].kind),
        [
            Parameter::Length,
            Parameter::Bore,
            Parameter::InletExtension,
            Parameter::OutletExtension
        ]
    );
    let conditions = speed_conditions((100.0, 100.0), 1);
    let problem = TuneProblem {
        circuit: &c,
        element: chamber,
        bounds: vec![Bound {
            parameter: Parameter::InletExtension,
            low: 0.2,
            high: 0.5,
        }],
        evaluator: RippleEvaluator::new(&c, 0, c.taps[0].location, &conditions, Objective::Worst),
        fluid_states: Vec::new(),
    };
    let result = problem
        .solve(SearchSettings::for_dims(1), &mut |_| {})
        .unwrap();
    let want = (1.6e9f64 / 870.0).sqrt() / (4.0 * 900.0);
    assert!((want - 0.3767).abs() < 1e-4);
    assert!(
        (result.best[0] / want - 1.0).abs() < 0.01,
        "{}",
        result.best[0]
    );
    assert!(result.after.objective_pa < 0.05 * result.before.objective_pa);
    // An extension that fills the chamber is refused, not solved.
    let e = &c.elements[chamber].kind;
    assert!(Parameter::InletExtension.apply(e, 0.65, &c.fluid).is_err());
}

const HOSE: &str = "\
elements:
  - name: hose
    kind: hose
    from: p
    to: v
    length: 2 m
    bore: 12.7 mm
    wave_speeds:
      - {pressure: 50 bar, wave_speed: 1000 m/s, loss_factor: 0.14}
      - {pressure: 250 bar, wave_speed: 1200 m/s, loss_factor: 0.10}
  - {name: load, kind: load_valve, at: v, resistance: 4e10}
";

/// The hose's wave speed and loss factor at its reference frequency (200
/// Hz), from B* = 1/(1/B + J_w): c = √(Re B*/ρ), η = Im B*/Re B*.
fn wave_speed_at_reference(c: &Circuit) -> (f64, f64) {
    let ElementKind::Hose(h) = kind(c, "hose") else {
        panic!()
    };
    let p = &h.line.properties;
    let b = p.compliance(2.0 * PI * 200.0).inv();
    ((b.re / p.density_kg_m3).sqrt(), b.im / b.re)
}

// The wall follows the circuit's mean pressure: at 150 bar, halfway between
// the data, the hose has 1100 m/s and η = 0.12 (linear interpolation by
// hand); re-reading the circuit at 100 bar (as the operating envelope does
// for each pressure level) gives 1050 m/s and 0.13; outside the data the end
// values are held and a warning says so.
#[test]
fn hose_wave_speed_follows_the_mean_pressure() {
    let at = |p: &str| {
        parse_circuit(
            &format!(
                "fluid: {{density: 870 kg/m3, bulk_modulus: 1.6 GPa, viscosity: 32 cSt, pressure: {p}}}\n{PUMP}{HOSE}"
            ),
            "hose.yaml",
        )
        .unwrap()
    };
    for (p, c_want, eta) in [("150 bar", 1100.0, 0.12), ("100 bar", 1050.0, 0.13)] {
        let (c, e) = wave_speed_at_reference(&at(p));
        assert!((c - c_want).abs() < 1e-6 * c_want, "{p}: {c}");
        assert!((e - eta).abs() < 1e-9, "{p}: {e}");
    }
    let c150 = at("150 bar");
    assert!(diagnostics::component_warnings(&c150).is_empty());
    // The library re-evaluation gives the same hose as a re-read.
    let ElementKind::Hose(h) = kind(&c150, "hose") else {
        panic!()
    };
    let again = h.at_mean_pressure(100e5, 870.0, 1.6e9).unwrap();
    let ElementKind::Hose(h100) = kind(&at("100 bar"), "hose").clone() else {
        panic!()
    };
    assert_eq!(again, h100);
    let high = at("300 bar");
    let (c, _) = wave_speed_at_reference(&high);
    assert!((c - 1200.0).abs() < 1e-6 * 1200.0);
    let w = diagnostics::component_warnings(&high);
    assert!(w[0].to_string().contains("outside its wall data"), "{w:?}");
}

// The operating envelope re-reads the circuit at each pressure level: the
// example's hose (1020 m/s at 50 bar, 1180 m/s at 250 bar, measured at
// 200 Hz) then has 1100 m/s at 150 bar and 1160 m/s at 225 bar by linear
// interpolation (the wall is rebuilt with the oil at that pressure, so the
// hose's wave speed is exactly the interpolated one); the parts behind the
// valve block stay in the circuit (the envelope's cut-off check sees
// through the block).
#[test]
fn envelope_pressure_levels_move_the_hose_wave_speed() {
    let file = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/networks/compactor_relief_valve.yaml"
    );
    let text = std::fs::read_to_string(file).unwrap();
    let base = parse_circuit(&text, file).unwrap();
    // the schematic draws every new kind (as a labelled box where it has no
    // symbol of its own)
    let svg = ripline::plot::schematic_svg(&base);
    for k in ["relief_valve", "cylinder"] {
        assert!(svg.contains(k), "{k} missing from the schematic");
    }
    for (bar, want) in [(150.0, 1100.0), (225.0, 1160.0)] {
        let point = ripline::envelope::OperatingPoint {
            pressure_pa: Some(bar * 1e5),
            ..Default::default()
        };
        let c = ripline::io::parse_circuit_at(&text, file, &point).unwrap();
        assert_eq!(c.elements.len(), base.elements.len());
        let ElementKind::Hose(h) = kind(&c, "ram hose") else {
            panic!()
        };
        assert_eq!(h.pressure.unwrap().mean_pressure_pa, bar * 1e5);
        let p = &h.line.properties;
        let b = p.compliance(2.0 * PI * 200.0).inv();
        let speed = (b.re / p.density_kg_m3).sqrt();
        assert!((speed - want).abs() < 1e-6 * want, "{bar} bar: {speed}");
    }
}
