//! Silencer sizing a designer can trust (issue 12): practical rules,
//! degeneracy, tune over an envelope, the designs table and plot, and a
//! hose as the silencer's reference line.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn ripline(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_ripline"))
        .args(args)
        .output()
        .expect("run ripline")
}

fn text(bytes: &[u8]) -> String {
    String::from_utf8_lossy(bytes).into_owned()
}

fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("ripline-sizing-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

fn repo(path: &str) -> String {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join(path)
        .display()
        .to_string()
}

fn json(path: &Path) -> serde_json::Value {
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

fn ok(o: &Output) -> String {
    assert_eq!(o.status.code(), Some(0), "{}", text(&o.stderr));
    text(&o.stdout)
}

const DAMPER: &str = "networks/drill_rig_feed_damper.yaml";

/// The drilling-rig damper over an envelope of two mean pressures.
fn damper_over_two_pressures(dir: &Path) -> String {
    let base = std::fs::read_to_string(repo(DAMPER)).unwrap();
    let path = dir.join("two_pressures.yaml");
    std::fs::write(
        &path,
        format!("{base}\nenvelope:\n  pressures: [120 bar, 200 bar]\n"),
    )
    .unwrap();
    path.display().to_string()
}

// Boyle's law V = V0·p0/p: at one pressure a damper's gas acts through the
// product of its gas volume and precharge (plus the small oil volume
// V0 − V, which separates them a little), so the two are degenerate.
#[test]
fn gas_volume_and_precharge_are_named_degenerate() {
    let dir = scratch("degenerate");
    let out = dir.join("t.json");
    let o = ripline(&[
        "tune",
        &repo(DAMPER),
        "--element",
        "damper",
        "--tap",
        "head block",
        "--vary",
        "gas_volume=0.05L..2L",
        "--vary",
        "precharge=60 bar gauge..190 bar gauge",
        "--samples",
        "40",
        "--json",
        out.to_str().unwrap(),
    ]);
    let report = ok(&o);
    assert!(report.contains("degenerate"), "{report}");
    assert!(report.contains("hold one"), "{report}");
    let v = json(&out);
    let d = &v["result"]["degeneracies"][0];
    assert_eq!(d["first"], "gas_volume");
    assert_eq!(d["second"], "precharge");
    assert!(d["correlation"].as_f64().unwrap() > 0.995, "{d}");
    let a = d["exponent"].as_f64().unwrap();
    assert!((a - 1.0).abs() < 0.1, "the product V0·p0: exponent {a}");
    // the pressure-vessel caution goes with every damper sized
    assert!(report.contains("pressure vessel"));
}

// The vessel-size rule flagged, then hard; a single parameter has nothing
// to be confused with.
#[test]
fn rules_are_flagged_then_hard() {
    let dir = scratch("rules");
    let (flagged, hard, designs) = (dir.join("f.json"), dir.join("h.json"), dir.join("d.csv"));
    let run = |extra: &[&str], out: &Path| {
        let mut args = vec![
            "tune",
            DAMPER,
            "--element",
            "damper",
            "--tap",
            "head block",
            "--vary",
            "gas_volume=0.05L..2L",
            "--max-volume",
            "0.12L",
            "--json",
            out.to_str().unwrap(),
        ];
        args.extend_from_slice(extra);
        let mut c = Command::new(env!("CARGO_BIN_EXE_ripline"));
        c.current_dir(env!("CARGO_MANIFEST_DIR")).args(&args);
        c.output().unwrap()
    };
    let report = ok(&run(
        &["--designs-csv", designs.to_str().unwrap()],
        &flagged,
    ));
    assert!(report.contains("BROKEN"), "{report}");
    let v = json(&flagged);
    let best = v["result"]["parameters"][0]["best"].as_f64().unwrap();
    assert!(best > 0.12e-3, "the unconstrained optimum is {best}");
    assert!(v["result"]["degeneracies"].as_array().unwrap().is_empty());
    let rule = |v: &serde_json::Value, name: &str| {
        v["result"]["rules"]["tuned"]
            .as_array()
            .unwrap()
            .iter()
            .find(|r| r["rule"] == name)
            .cloned()
            .unwrap()
    };
    assert_eq!(rule(&v, "vessel_size")["pass"], false);
    // the file's 120 bar gauge precharge at 200 bar gauge: 121.01/201.01
    let p = rule(&v, "precharge_fraction")["value"].as_f64().unwrap();
    assert!((p - 121.013_25 / 201.013_25).abs() < 1e-9, "{p}");
    // every evaluation is a row of the designs table
    let table = std::fs::read_to_string(&designs).unwrap();
    let mut lines = table.lines();
    assert_eq!(
        lines.next().unwrap(),
        "evaluation,stage,objective_pa,objective_db,keeps_rules,size,margin_db,gas_volume_m3"
    );
    let rows: Vec<&str> = lines.collect();
    assert_eq!(
        rows.len() as u64,
        v["result"]["search"]["evaluations"].as_u64().unwrap()
    );
    let broken = rows.iter().filter(|r| r.contains(",false,")).count();
    assert!(broken > 0 && broken < rows.len());
    // hard: the best design keeps the limit, at (or just under) it
    ok(&run(&["--hard-rules"], &hard));
    let v = json(&hard);
    let best = v["result"]["parameters"][0]["best"].as_f64().unwrap();
    assert!(best <= 0.12e-3 && best > 0.11e-3, "{best}");
    assert_eq!(rule(&v, "vessel_size")["pass"], true);
}

#[test]
fn tune_over_an_envelope_uses_its_lowest_pressure() {
    let dir = scratch("envelope");
    let file = damper_over_two_pressures(&dir);
    let out = dir.join("t.json");
    let csv = dir.join("t.csv");
    let plot = dir.join("d.svg");
    let report = ok(&ripline(&[
        "tune",
        &file,
        "--element",
        "damper",
        "--tap",
        "head block",
        "--vary",
        "gas_volume=0.05L..2L",
        "--samples",
        "5",
        "--envelope",
        "--json",
        out.to_str().unwrap(),
        "--csv",
        csv.to_str().unwrap(),
        "--designs-plot",
        plot.to_str().unwrap(),
    ]));
    assert!(report.contains("at envelope point `"), "{report}");
    let v = json(&out);
    assert_eq!(v["result"]["points"].as_array().unwrap().len(), 2);
    // the lowest operating pressure is the envelope's 120 bar gauge
    let lowest = v["result"]["rules"]["lowest_operating_pa"]
        .as_f64()
        .unwrap();
    assert!((lowest - 121.013_25e5).abs() < 1.0, "{lowest}");
    // one CSV row per speed and point, the point named
    let table = std::fs::read_to_string(&csv).unwrap();
    assert_eq!(table.lines().count(), 1 + 2 * 41);
    assert!(table.lines().nth(1).unwrap().ends_with(",120 bar"));
    assert!(std::fs::read_to_string(&plot).unwrap().contains("<svg"));
    // a precharge bound above the lowest pressure of the envelope (121 bar
    // abs), although below the file's 200 bar: refused, exit 2, nothing
    // written
    let json2 = dir.join("refused.json");
    let o = ripline(&[
        "tune",
        &file,
        "--element",
        "damper",
        "--tap",
        "head block",
        "--vary",
        "precharge=100 bar gauge..130 bar gauge",
        "--envelope",
        "--json",
        json2.to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(2), "{}", text(&o.stderr));
    assert!(text(&o.stderr).contains("operating pressure of 121.013"));
    assert!(!json2.exists());
    // a file without an envelope
    let o = ripline(&[
        "tune",
        &repo(DAMPER),
        "--element",
        "damper",
        "--vary",
        "gas_volume=0.05L..2L",
        "--envelope",
    ]);
    assert_eq!(o.status.code(), Some(2));
    assert!(text(&o.stderr).contains("no `envelope` section"));
}

// A shunt volume V at a junction of lines of impedance Z0 has
// TL = 10·log10(1 + (ωVZ0/(2B))²) (the shunt-compliance law, e.g. Munjal,
// Acoustics of Ducts and Mufflers, recalled from memory); the valve block's
// galleries in the forestry crane are met by a hose only.
#[test]
fn silencer_takes_a_hose_as_reference_line() {
    let dir = scratch("hose");
    let out = dir.join("s.json");
    ok(&ripline(&[
        "silencer",
        &repo("networks/forestry_crane_hose.yaml"),
        "--element",
        "block_galleries",
        "--tap",
        "valve block",
        "--json",
        out.to_str().unwrap(),
    ]));
    let v = json(&out);
    let r = &v["result"]["reference"];
    assert_eq!(r["upstream"], "boom_hose");
    assert_eq!(r["downstream"], "boom_hose");
    let z0 = r["upstream_z0_pa_s_m3"].as_f64().unwrap();
    assert!(z0 > 0.0 && z0.is_finite());
    // TL of the shunt volume against the law, at every harmonic
    let b = v["result"]["harmonics"].as_array().unwrap();
    assert!(!b.is_empty());
    let tl0 = b[0]["transmission_loss_db"].as_f64().unwrap();
    let f0 = b[0]["freq_hz"].as_f64().unwrap();
    // solve the law for V/B from the first harmonic, then check the others
    let x0 = ((10f64.powf(tl0 / 10.0) - 1.0).sqrt()) / (2.0 * std::f64::consts::PI * f0 * z0 / 2.0);
    for h in b {
        let f = h["freq_hz"].as_f64().unwrap();
        let tl = h["transmission_loss_db"].as_f64().unwrap();
        let law = 10.0 * (1.0 + (2.0 * std::f64::consts::PI * f * x0 * z0 / 2.0).powi(2)).log10();
        assert!((tl - law).abs() < 1e-6, "{f} Hz: {tl} against {law}");
    }
    // V/B: 0.25 L over a bulk modulus between 0.5 and 2.5 GPa
    assert!(x0 > 0.25e-3 / 2.5e9 && x0 < 0.25e-3 / 0.5e9, "{x0}");
}

/// A stiff source (no source volume) feeding a resistance R = 1e10 Pa·s/m³
/// (an orifice and a load valve in series) with a closed side branch teed
/// off at the pump, lossless and rigid, one harmonic at one speed:
/// 9 × 1500 rpm = 225 Hz.
const BRANCH: &str = "\
title: smallest side branch (invented test circuit)
fluid: {density: 870 kg/m3, bulk_modulus: 1.6 GPa, viscosity: 32 cSt}
line_model: lossless
harmonics: 1
pump: {node: a, speed: 1500 rpm, pumping_elements: 9,
       flow_ripple: [{harmonic: 1, amplitude: 1 L/min}], source_impedance: {volume: 0}}
elements:
  - {name: branch, kind: side_branch, at: a, length: 0.3 m, bore: 10 mm, rigid: true}
  - {name: valve, kind: orifice, from: a, to: b, resistance: 4e9}
  - {name: load, kind: load_valve, at: b, resistance: 6e9}
taps:
  - {name: outlet, node: a}
limits:
  - {tap: outlet, rms: LIMIT}
";

// The closed branch's input admittance is j·tan(kL)/Zc (the quarter-wave
// law, Kinsler et al., *Fundamentals of Acoustics*, ch. 10), so at the node
// |P| = Q/√(1/R² + tan²(kL)/Zc²), falling from Q·R at L = 0 to zero at
// L = λ/4. The smallest length with P_rms ≤ P_lim is
// L* = atan(Zc·√(Q²/(2·P_lim²) − 1/R²))/k, k = 2πf/c, c = √(B/ρ),
// Zc = ρc/A: solved here by hand, against tune's search.
#[test]
fn the_smallest_side_branch_meeting_a_limit_is_the_quarter_wave_law() {
    let dir = scratch("smallest");
    let file = dir.join("branch.yaml");
    std::fs::write(&file, BRANCH.replace("LIMIT", "0.5 bar")).unwrap();
    let out = dir.join("t.json");
    let designs = dir.join("d.csv");
    let report = ok(&ripline(&[
        "tune",
        file.to_str().unwrap(),
        "--element",
        "branch",
        "--vary",
        "length=0.2m..1.45m",
        "--objective",
        "smallest",
        "--size",
        "length",
        "--json",
        out.to_str().unwrap(),
        "--designs-csv",
        designs.to_str().unwrap(),
    ]));
    let (rho, b, r) = (870.0f64, 1.6e9f64, 1e10f64);
    let c = (b / rho).sqrt();
    let area = std::f64::consts::PI * 0.005f64.powi(2);
    let zc = rho * c / area;
    let q = 1e-3 / 60.0;
    let p_lim = 0.5e5;
    let k = 2.0 * std::f64::consts::PI * 225.0 / c;
    let expected = (zc * (q * q / (2.0 * p_lim * p_lim) - 1.0 / (r * r)).sqrt()).atan() / k;
    let v = json(&out);
    let best = v["result"]["parameters"][0]["best"].as_f64().unwrap();
    assert!(
        (best / expected - 1.0).abs() < 1e-4,
        "{best} m against the law's {expected} m\n{report}"
    );
    let s = &v["result"]["smallest"];
    assert_eq!(s["met"], true);
    let margin = s["tightest"]["margin_db"].as_f64().unwrap();
    assert!((0.0..0.01).contains(&margin), "{margin}");
    assert!(
        report.contains("smallest length meeting every limit"),
        "{report}"
    );
    assert!(std::fs::read_to_string(&designs).unwrap().starts_with(
        "evaluation,stage,objective_pa,objective_db,keeps_rules,size,margin_db,length_m\n"
    ));

    // a limit no branch within the bounds meets (the load alone gives
    // Q·R/√2 = 1.18 bar; a 0.2..0.4 m branch brings it to 1.13 bar at
    // best): reported with the tap that fails, exit code 3
    let file = dir.join("tight.yaml");
    std::fs::write(&file, BRANCH.replace("LIMIT", "0.1 bar")).unwrap();
    let o = ripline(&[
        "tune",
        file.to_str().unwrap(),
        "--element",
        "branch",
        "--vary",
        "length=0.2m..0.4m",
        "--objective",
        "smallest",
    ]);
    assert_eq!(o.status.code(), Some(3), "{}", text(&o.stderr));
    let report = text(&o.stdout);
    assert!(
        report.contains(
            "NO DESIGN within the bounds meets the limits: the nearest misses `outlet` rms: 0.1 bar"
        ),
        "{report}"
    );
    // the nearest is the longest branch allowed
    assert!(report.contains("length: 400.0 mm"), "{report}");
}

/// `silencer` concludes with the worst overall ripple at its point over the
/// speed range without the silencer and with it. On the drilling-rig demo
/// (networks/drill_rig_feed_damper.yaml; the same circuit without its damper
/// is networks/drill_rig_feed.yaml, an invented scenario) each equals
/// within 0.01 dB the maximum over a brute-force grid of 8001 speeds
/// (0.2 rpm apart) of the circuit with and without the damper, the
/// reference, and its speed lies within 1 rpm of that grid's.
#[test]
fn silencer_gives_the_worst_ripple_over_the_speeds_with_and_without() {
    use ripline::analysis::sweep::{SweepSettings, sweep};
    use ripline::network::Plan;
    let dir = scratch("silencer-worst");
    let out = dir.join("s.json");
    let o = ripline(&[
        "silencer",
        &repo("networks/drill_rig_feed_damper.yaml"),
        "--element",
        "damper",
        "--tap",
        "head block",
        "--json",
        out.to_str().unwrap(),
    ]);
    let stdout = ok(&o);
    assert!(
        stdout.contains("worst overall ripple at point `head block` over the speed range"),
        "{stdout}"
    );
    let w = &json(&out)["result"]["worst_over_speeds"];
    let brute = |text: &str| {
        let c = ripline::io::parse_circuit(text, "feed.yaml").unwrap();
        let plan = Plan::compile(&c).unwrap();
        let shaft = ripline::source::Shaft::single(&c.pumps, 0);
        let (lo, hi) = c.pumps[0].speed_range_rev_s.unwrap();
        let settings = SweepSettings {
            speeds_rev_s: (0..8001)
                .map(|i| lo + (hi - lo) * i as f64 / 8000.0)
                .collect(),
            harmonics: c.harmonics,
            min_rise_db: f64::INFINITY,
        };
        let r = sweep(&plan, &shaft, &settings, &mut |_| {}).unwrap();
        let pi = r.points.iter().position(|p| p == "head block").unwrap();
        (0..8001)
            .map(|si| (r.rms_pa(si, pi), r.speeds_rev_s[si]))
            .fold((0.0, 0.0), |b, x| if x.0 > b.0 { x } else { b })
    };
    for (file, key) in [
        ("drill_rig_feed_damper.yaml", "with"),
        ("drill_rig_feed.yaml", "without"),
    ] {
        let text = std::fs::read_to_string(repo(&format!("networks/{file}"))).unwrap();
        let (reference, speed) = brute(&text);
        let value = w[format!("{key}_pa")].as_f64().unwrap();
        let db = 20.0 * (value / reference).log10();
        assert!(db.abs() < 0.01, "{key}: {db} dB");
        let at = w[format!("{key}_speed_rev_s")].as_f64().unwrap();
        assert!(
            (at - speed).abs() * 60.0 < 1.0,
            "{key}: {} against {} rpm",
            at * 60.0,
            speed * 60.0
        );
    }
    let _ = std::fs::remove_dir_all(dir);
}
