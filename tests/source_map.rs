//! Source maps (pump source files of several speeds and mean pressures):
//! interpolation exact at the map's points and linear between them through
//! the whole solve, edges held with a warning, the single-speed fallback
//! said, conditions added one fit at a time, bad maps refused with their
//! file and line. The pumps and numbers are invented for the tests.

use ripline::C64;
use ripline::analysis::ripple::harmonic_ripple;
use ripline::estimate::fit::HarmonicStatus;
use ripline::io::source_file::{
    PumpSource, SourceFile, SourceHarmonic, TestConditions, add_condition, parse_source,
    write_source_file, write_source_map,
};
use ripline::network::Plan;
use ripline::source::map::lerp_polar;
use std::path::{Path, PathBuf};
use std::process::Command;

const CIRCUIT: &str = "\
fluid: {density: 870, bulk_modulus: 1.6 GPa, viscosity: 32 cSt, pressure: PRESSURE}
pump:
  node: a
  speed: SPEED
  source_file: FILE
elements:
  - {name: line, kind: tube, from: a, to: b, length: 2.5 m, bore: 10 mm, wall: 2 mm, material: steel}
  - {name: valve, kind: load_valve, at: b, resistance: 3e10}
";

/// A condition at `rpm` and `bar` with two harmonics: flow amplitudes
/// `a`, phases `phase_deg`, and impedances |Zs| `z` at −80°, −85°.
fn condition(rpm: f64, bar: f64, a: [f64; 2], phase_deg: f64, z: [f64; 2]) -> PumpSource {
    PumpSource {
        name: "map pump".into(),
        speed_rev_s: rpm / 60.0,
        speed_uncertainty_rev_s: None,
        pumping_elements: 9,
        harmonics: (0..2)
            .map(|k| SourceHarmonic {
                order: k as u32 + 1,
                flow: C64::from_polar(a[k], (phase_deg + 10.0 * k as f64).to_radians()),
                impedance: C64::from_polar(z[k], (-80.0 - 5.0 * k as f64).to_radians()),
                flow_uncertainty: None,
                impedance_uncertainty: None,
                status: HarmonicStatus::Estimated,
                note: None,
            })
            .collect(),
        test: TestConditions {
            pressure_pa: Some(bar * 1e5),
            oil: Some("ISO VG 46".into()),
            temperature_k: Some(323.15),
            origin: None,
        },
    }
}

/// The 2 × 2 map: 1000 and 2000 rpm at 100 and 200 bar.
fn grid() -> Vec<PumpSource> {
    vec![
        condition(1000.0, 100.0, [1e-5, 4e-6], 20.0, [1e10, 6e9]),
        condition(2000.0, 100.0, [3e-5, 8e-6], 60.0, [2e10, 8e9]),
        condition(1000.0, 200.0, [2e-5, 5e-6], -40.0, [3e10, 1e10]),
        condition(2000.0, 200.0, [5e-5, 9e-6], 0.0, [4e10, 2e10]),
    ]
}

fn dir(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("ripline-map-{name}-{}", std::process::id()));
    std::fs::create_dir_all(&d).unwrap();
    d
}

fn write_map(path: &Path, conditions: Vec<PumpSource>) {
    let file = SourceFile {
        name: "map pump".into(),
        pumping_elements: 9,
        conditions,
    };
    let mut buf = Vec::new();
    write_source_map(&file, &mut buf, "an invented pump for a test").unwrap();
    std::fs::write(path, buf).unwrap();
}

fn write_single(path: &Path, c: &PumpSource) {
    let mut buf = Vec::new();
    write_source_file(c, &mut buf, "an invented pump for a test").unwrap();
    std::fs::write(path, buf).unwrap();
}

/// The circuit at `rpm` and `bar` with the pump from `file`, its ripple at
/// both harmonics of the tap-less nodes, and its warnings.
fn solve(d: &Path, file: &str, rpm: f64, bar: f64) -> (Vec<C64>, Vec<String>) {
    let path = d.join(format!("circuit-{file}-{rpm}-{bar}.yaml"));
    std::fs::write(
        &path,
        CIRCUIT
            .replace("PRESSURE", &format!("{bar} bar"))
            .replace("SPEED", &format!("{rpm} rpm"))
            .replace("FILE", file),
    )
    .unwrap();
    let c = ripline::io::load_circuit(&path).unwrap();
    let warnings = ripline::diagnostics::circuit_warnings(&c, 1000.0)
        .iter()
        .map(|w| w.to_string())
        .collect();
    let r = harmonic_ripple(&Plan::compile(&c).unwrap(), 0, 2).unwrap();
    let p = r
        .taps
        .iter()
        .flat_map(|t| t.harmonics.iter().map(|h| h.pressure))
        .collect();
    (p, warnings)
}

fn close(a: &[C64], b: &[C64], rel: f64) -> bool {
    a.len() == b.len()
        && a.iter()
            .zip(b)
            .all(|(x, y)| (x - y).norm() <= rel * y.norm())
}

#[test]
fn a_map_is_exact_at_its_points_and_linear_between() {
    let d = dir("exact");
    write_map(&d.join("map.yaml"), grid());
    // At every condition the map solves as the single condition does
    // (Norton source at the measured point).
    for (i, c) in grid().iter().enumerate() {
        write_single(&d.join(format!("one{i}.yaml")), c);
        let rpm = c.speed_rev_s * 60.0;
        let bar = c.test.pressure_pa.unwrap() / 1e5;
        let (map, w) = solve(&d, "map.yaml", rpm, bar);
        let (one, _) = solve(&d, &format!("one{i}.yaml"), rpm, bar);
        assert!(close(&map, &one, 1e-12), "condition {i}: {map:?} {one:?}");
        assert!(!w.iter().any(|w| w.contains("source")), "{w:?}");
    }
    // Between: at 1500 rpm and 130 bar (u = 0.5, v = 0.3) the map equals a
    // single condition holding the closed-form values: along each level
    // |X| and phase linear in speed, then linear in pressure (magnitude
    // (1−v)·m_lo + v·m_hi; phases the shorter way round).
    let g = grid();
    let mid = |a: &PumpSource, b: &PumpSource, t: f64| -> PumpSource {
        let mut c = a.clone();
        for (h, (ha, hb)) in c
            .harmonics
            .iter_mut()
            .zip(a.harmonics.iter().zip(&b.harmonics))
        {
            h.flow = lerp_polar(ha.flow, hb.flow, t);
            h.impedance = lerp_polar(ha.impedance, hb.impedance, t);
        }
        c
    };
    let lo = mid(&g[0], &g[1], 0.5);
    let hi = mid(&g[2], &g[3], 0.5);
    let mut at = mid(&lo, &hi, 0.3);
    at.speed_rev_s = 25.0;
    at.test.pressure_pa = Some(130e5);
    // The closed form of harmonic 1's amplitude, bilinear in (u, v).
    let want = 0.7 * (0.5 * 1e-5 + 0.5 * 3e-5) + 0.3 * (0.5 * 2e-5 + 0.5 * 5e-5);
    assert!((at.harmonics[0].flow.norm() - want).abs() < 1e-18);
    // Phase: 20° → 60° gives 40°, −40° → 0° gives −20°, then 40° → −20°
    // at 0.3: 22°.
    assert!((at.harmonics[0].flow.arg().to_degrees() - 22.0).abs() < 1e-9);
    write_single(&d.join("mid.yaml"), &at);
    let (map, _) = solve(&d, "map.yaml", 1500.0, 130.0);
    let (one, _) = solve(&d, "mid.yaml", 1500.0, 130.0);
    assert!(close(&map, &one, 1e-12), "{map:?} {one:?}");
    std::fs::remove_dir_all(d).unwrap();
}

#[test]
fn outside_the_map_the_edge_is_held_with_a_warning() {
    let d = dir("edge");
    write_map(&d.join("map.yaml"), grid());
    // 2600 rpm and 250 bar: the 2000 rpm, 200 bar condition held (its flow
    // not scaled with speed), with a warning naming the point and range.
    let (map, w) = solve(&d, "map.yaml", 2600.0, 250.0);
    let msg = w
        .iter()
        .find(|w| w.contains("outside its source map"))
        .expect("a warning");
    assert!(
        msg.contains("2600 rpm at 250 bar") && msg.contains("1000 .. 2000 rpm, 100 .. 200 bar"),
        "{msg}"
    );
    // The held corner: the 2000 rpm, 200 bar values at 2600 rpm, as a
    // single condition measured at 2600 rpm holds them.
    let mut corner = grid()[3].clone();
    corner.speed_rev_s = 2600.0 / 60.0;
    write_single(&d.join("corner.yaml"), &corner);
    let (one, _) = solve(&d, "corner.yaml", 2600.0, 200.0);
    assert!(close(&map, &one, 1e-12), "{map:?} {one:?}");
    std::fs::remove_dir_all(d).unwrap();
}

#[test]
fn one_speed_scales_in_proportion_and_says_so() {
    let d = dir("single");
    write_single(&d.join("one.yaml"), &grid()[0]);
    let (at_2000, w) = solve(&d, "one.yaml", 2000.0, 100.0);
    assert!(
        w.iter()
            .any(|w| w.contains("holds one speed (1000 rpm)")
                && w.contains("in proportion to speed")),
        "{w:?}"
    );
    // At 2000 rpm: the flow twice the written one (in proportion to
    // speed) and the impedance read from the table against frequency at
    // 1000 rpm: harmonic 1 at 300 Hz is where harmonic 2 was, harmonic 2 at
    // 600 Hz beyond the table, its end held. So it solves as a condition
    // measured at 2000 rpm with those values.
    let mut equivalent = grid()[0].clone();
    equivalent.speed_rev_s = 2000.0 / 60.0;
    let z2 = equivalent.harmonics[1].impedance;
    for h in &mut equivalent.harmonics {
        h.flow *= 2.0;
        h.impedance = z2;
    }
    write_single(&d.join("equivalent.yaml"), &equivalent);
    let (want, _) = solve(&d, "equivalent.yaml", 2000.0, 100.0);
    assert!(close(&at_2000, &want, 1e-12), "{at_2000:?} {want:?}");
    std::fs::remove_dir_all(d).unwrap();
}

#[test]
fn conditions_are_added_one_at_a_time_and_read_back() {
    let d = dir("append");
    let path = d.join("map.yaml");
    let g = grid();
    write_single(&path, &g[0]);
    for c in &g[1..] {
        let file = add_condition(&path, c.clone()).unwrap();
        let mut buf = Vec::new();
        write_source_map(&file, &mut buf, "test").unwrap();
        std::fs::write(&path, buf).unwrap();
    }
    let text = std::fs::read_to_string(&path).unwrap();
    let back = parse_source(&text, "map.yaml").unwrap();
    assert_eq!(back.conditions.len(), 4);
    for (a, b) in back.conditions.iter().zip(&g) {
        assert_eq!(a.speed_rev_s, b.speed_rev_s);
        assert_eq!(a.test.pressure_pa, b.test.pressure_pa);
        assert_eq!(a.test.oil, b.test.oil);
        assert!((a.test.temperature_k.unwrap() - 323.15).abs() < 1e-9);
        for (x, y) in a.harmonics.iter().zip(&b.harmonics) {
            // no uncertainty: all of a double's digits
            assert!((x.flow - y.flow).norm() <= 1e-15 * y.flow.norm());
            assert!((x.impedance - y.impedance).norm() <= 1e-15 * y.impedance.norm());
        }
    }
    // A condition already there (1 % and 1 bar) is refused, naming the one
    // it repeats and its line.
    let again = condition(1005.0, 200.5, [1e-5, 1e-6], 0.0, [1e10, 1e10]);
    let msg = add_condition(&path, again).unwrap_err().to_string();
    let line3 = text
        .lines()
        .enumerate()
        .filter(|(_, l)| l.contains("- speed:"))
        .nth(2)
        .unwrap()
        .0
        + 1;
    assert!(
        msg.contains(&format!("map.yaml:{line3}:"))
            && msg.contains("repeats condition 3 of the file (1000 rpm, 200 bar)"),
        "{msg}"
    );
    // Other harmonics are refused.
    let mut fewer = condition(3000.0, 100.0, [1e-5, 1e-6], 0.0, [1e10, 1e10]);
    fewer.harmonics.pop();
    let msg = add_condition(&path, fewer).unwrap_err().to_string();
    assert!(msg.contains("same harmonics"), "{msg}");
    std::fs::remove_dir_all(d).unwrap();
}

#[test]
fn bad_maps_are_refused_with_file_and_line_and_exit_2() {
    let d = dir("bad");
    let harmonics = |n: usize| -> String {
        (1..=n)
            .map(|k| format!("      - {{harmonic: {k}, flow_amplitude: 1e-5, flow_phase: 0, impedance_amplitude: 1e10, impedance_phase: -80 deg}}\n"))
            .collect()
    };
    let cond = |rpm: u32, bar: Option<u32>, n: usize| -> String {
        format!(
            "  - speed: {rpm} rpm\n{}    harmonics:\n{}",
            bar.map(|b| format!("    pressure: {b} bar\n"))
                .unwrap_or_default(),
            harmonics(n)
        )
    };
    let head = "pump: bad\npumping_elements: 9\nconditions:\n";
    let cases: Vec<(String, &str, &str)> = vec![
        // a duplicate point (within 1 % and 1 bar): located at the second
        (
            format!(
                "{head}{}{}",
                cond(1000, Some(100), 2),
                cond(1005, Some(100), 2)
            ),
            ":9:",
            "repeats condition 1 (1000 rpm, 100 bar, line 4)",
        ),
        // a grid with a hole: 2000 rpm at 200 bar is missing
        (
            format!(
                "{head}{}{}{}",
                cond(1000, Some(100), 2),
                cond(2000, Some(100), 2),
                cond(1000, Some(200), 2)
            ),
            ":3:",
            "not a full grid: no condition at about 2000 rpm, 200 bar",
        ),
        // a condition missing a key
        (
            format!("{head}{}{}", cond(1000, Some(100), 2), cond(2000, None, 2)),
            ":9:",
            "condition 2 has no mean `pressure`",
        ),
        // mixed harmonic counts
        (
            format!(
                "{head}{}{}",
                cond(1000, Some(100), 2),
                cond(2000, Some(100), 1)
            ),
            ":11:",
            "condition 2 lists harmonics 1 where condition 1 lists 1 .. 2",
        ),
    ];
    for (i, (text, at, what)) in cases.iter().enumerate() {
        let map = d.join(format!("bad{i}.yaml"));
        std::fs::write(&map, text).unwrap();
        let msg = parse_source(text, "bad.yaml").unwrap_err().to_string();
        assert!(
            msg.starts_with(&format!("bad.yaml{at}")) && msg.contains(what),
            "case {i}: {msg}"
        );
        // Through the CLI: exit 2, the source file and line named, nothing
        // written.
        let circuit = d.join(format!("circuit{i}.yaml"));
        std::fs::write(
            &circuit,
            CIRCUIT
                .replace("PRESSURE", "150 bar")
                .replace("SPEED", "1500 rpm")
                .replace("FILE", &format!("bad{i}.yaml")),
        )
        .unwrap();
        let csv = d.join(format!("out{i}.csv"));
        let out = Command::new(env!("CARGO_BIN_EXE_ripline"))
            .args([
                "solve",
                circuit.to_str().unwrap(),
                "--csv",
                csv.to_str().unwrap(),
            ])
            .output()
            .unwrap();
        let err = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "case {i}: {err}");
        assert!(
            err.contains(&format!("bad{i}.yaml{at}")) && err.contains(what),
            "case {i}: {err}"
        );
        assert!(!csv.exists());
    }
    // A map of several pressures in a circuit without a mean pressure.
    write_map(&d.join("map.yaml"), grid());
    let circuit = d.join("nopressure.yaml");
    std::fs::write(
        &circuit,
        CIRCUIT
            .replace(", pressure: PRESSURE", "")
            .replace("SPEED", "1500 rpm")
            .replace("FILE", "map.yaml"),
    )
    .unwrap();
    let msg = ripline::io::load_circuit(&circuit).unwrap_err().to_string();
    assert!(
        msg.contains(":5:") && msg.contains("give the fluid's mean `pressure`"),
        "{msg}"
    );
    std::fs::remove_dir_all(d).unwrap();
}

/// `fit --add-condition` on the demo bench (networks/bench/demo_bench.yaml,
/// an invented scenario) at two mean pressures: the second fit makes a map
/// of two conditions that circuits read; a repeat is refused with exit 2
/// and the file left as it was.
#[test]
fn fit_adds_conditions_and_refuses_a_repeat() {
    let d = dir("fit");
    let here = std::env::current_dir().unwrap();
    let bench_text = std::fs::read_to_string("networks/bench/demo_bench.yaml")
        .unwrap()
        .replace(
            "records: data/",
            &format!("records: {}/networks/bench/data/", here.display()),
        );
    let bench = |bar: u32| {
        let p = d.join(format!("bench{bar}.yaml"));
        std::fs::write(
            &p,
            bench_text.replace(
                "viscosity: 32 cSt}",
                &format!(
                    "viscosity: 32 cSt, pressure: {bar} bar, grade: VG46, temperature: 45 degC}}"
                ),
            ),
        )
        .unwrap();
        p
    };
    let map = d.join("map.yaml");
    let fit = |bench: &Path| {
        Command::new(env!("CARGO_BIN_EXE_ripline"))
            .args([
                "fit",
                bench.to_str().unwrap(),
                "--draws",
                "0",
                "--source-out",
            ])
            .arg(&map)
            .arg("--add-condition")
            .output()
            .unwrap()
    };
    let o = fit(&bench(150));
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let one = std::fs::read_to_string(&map).unwrap();
    assert!(
        one.contains("pressure: 150 bar")
            && one.contains("oil: \"VG46\"")
            && one.contains("temperature: 45 degC"),
        "{one}"
    );
    let o = fit(&bench(150));
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(
        err.contains("map.yaml:") && err.contains("repeats condition 1 of the file"),
        "{err}"
    );
    assert_eq!(std::fs::read_to_string(&map).unwrap(), one);
    let o = fit(&bench(250));
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let text = std::fs::read_to_string(&map).unwrap();
    let back = parse_source(&text, "map.yaml").unwrap();
    assert_eq!(back.conditions.len(), 2);
    assert_eq!(back.conditions[1].test.pressure_pa, Some(250e5));
    // One speed at two pressures: read at 200 bar, in proportion to speed,
    // said in the report.
    let circuit = d.join("circuit.yaml");
    std::fs::write(
        &circuit,
        CIRCUIT
            .replace("PRESSURE", "200 bar")
            .replace("  speed: SPEED\n", "")
            .replace("FILE", "map.yaml"),
    )
    .unwrap();
    let o = Command::new(env!("CARGO_BIN_EXE_ripline"))
        .args(["solve", circuit.to_str().unwrap()])
        .output()
        .unwrap();
    let all = format!(
        "{}{}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    );
    assert!(o.status.success(), "{all}");
    assert!(
        all.contains("holds one speed") && all.contains("several mean pressures"),
        "{all}"
    );
    std::fs::remove_dir_all(d).unwrap();
}
