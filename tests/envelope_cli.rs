//! End-to-end tests of `ripline assess` and of the envelope in the other
//! commands: exit codes, outputs, located errors at envelope points.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

const ENVELOPE: &str = include_str!("circuits/envelope_test.yaml");

fn ripline(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_ripline"))
        .args(args)
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .output()
        .expect("the ripline binary runs")
}

fn text(bytes: &[u8]) -> String {
    String::from_utf8_lossy(bytes).into_owned()
}

/// A fresh scratch folder for one test.
fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("ripline-env-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

fn write(dir: &Path, name: &str, content: &str) -> String {
    let path = dir.join(name);
    std::fs::write(&path, content).unwrap();
    path.to_str().unwrap().to_string()
}

// Exit codes of `assess` (README, "Exit codes"): 3 when a limit is exceeded
// (outputs complete), 0 when every limit is met or none is given.
#[test]
fn assess_exit_codes_follow_the_verdicts() {
    let dir = scratch("exit");
    let csv = dir.join("findings.csv");
    let grid = dir.join("grid.csv");
    let plot = dir.join("plot.svg");
    let failing = write(&dir, "failing.yaml", ENVELOPE);
    let o = ripline(&[
        "assess",
        &failing,
        "--csv",
        csv.to_str().unwrap(),
        "--grid-csv",
        grid.to_str().unwrap(),
        "--plot",
        plot.to_str().unwrap(),
    ]);
    let out = text(&o.stdout);
    assert_eq!(o.status.code(), Some(3), "{out}{}", text(&o.stderr));
    assert!(out.contains("FAIL  `outlet`: rms ≤ 1 bar"), "{out}");
    assert!(
        out.contains("PASS  `end`: each harmonic (peak) ≤ 150 dB"),
        "{out}"
    );
    assert!(
        out.contains("result: 2 of 3 limits exceeded (exit code 3)"),
        "{out}"
    );
    assert!(out.contains("CAUTION: a gas-charged pulsation damper is a pressure vessel"));
    // the progress bar stays off when stderr is not a terminal
    assert!(!text(&o.stderr).contains("assessing the envelope"));
    let findings = std::fs::read_to_string(&csv).unwrap();
    assert_eq!(
        findings.lines().next(),
        Some(
            "rank,kind,point,harmonic,speed_rpm,pressure_pa,temperature_c,case,frequency_hz,rms_pa,level_db,below_overall_db,rise_db,resonance_hz"
        )
    );
    let grid_text = std::fs::read_to_string(&grid).unwrap();
    let mut lines = grid_text.lines();
    assert_eq!(
        lines.next(),
        Some("point,harmonic,speed_rpm,pressure_pa,temperature_c,case,frequency_hz,amplitude_pa")
    );
    // 12 points × 201 speeds × 2 harmonics with flow × (2 taps, or 1 where
    // the case `closed` cuts `end` off: 4 of the 12 points)
    assert_eq!(lines.count(), 201 * 2 * (8 * 2 + 4));
    assert!(dir.join("plot-outlet.svg").exists() && dir.join("plot-end.svg").exists());

    let relaxed = write(
        &dir,
        "relaxed.yaml",
        &ENVELOPE.replace(
            "rms: 1 bar, peak_to_peak: 3 bar",
            "rms: 20 bar, peak_to_peak: 60 bar",
        ),
    );
    let o = ripline(&["assess", &relaxed]);
    assert_eq!(o.status.code(), Some(0), "{}", text(&o.stderr));
    assert!(text(&o.stdout).contains("result: every limit met (3 of 3)"));

    let cut = ENVELOPE.find("limits:").unwrap();
    let unlimited = write(&dir, "unlimited.yaml", &ENVELOPE[..cut]);
    let o = ripline(&["assess", &unlimited]);
    assert_eq!(o.status.code(), Some(0), "{}", text(&o.stderr));
    assert!(text(&o.stdout).contains("verdicts: none"));
}

// An envelope point that makes the circuit invalid (here an oil temperature
// beyond the oil models, -40..150 °C) is a located error naming the point
// and the envelope key: exit 2, nothing written.
#[test]
fn an_invalid_envelope_point_is_located_and_writes_nothing() {
    let dir = scratch("bad-point");
    let bad = write(
        &dir,
        "hot.yaml",
        &ENVELOPE.replace(
            "temperatures: [40 degC, 80 degC]",
            "temperatures: [40 degC, 180 degC]",
        ),
    );
    let csv = dir.join("f.csv");
    let o = ripline(&["assess", &bad, "--csv", csv.to_str().unwrap()]);
    let err = text(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(err.contains("hot.yaml:26:"), "{err}");
    assert!(
        err.contains("envelope.temperatures[1]: at envelope point `30 bar, 180 °C, open`: "),
        "{err}"
    );
    assert!(err.contains("outside the range of the oil models"), "{err}");
    assert!(!csv.exists());
    // a load case whose value is out of range: located at the case's key
    let bad = write(
        &dir,
        "case.yaml",
        &ENVELOPE.replace("valve: {resistance: 5e10}", "valve: {resistance: -5}"),
    );
    let o = ripline(&["assess", &bad]);
    let err = text(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(err.contains("case.yaml:31:"), "{err}");
    assert!(
        err.contains(
            "envelope.cases[1].set.valve.resistance: at envelope point `30 bar, 40 °C, throttled`"
        ),
        "{err}"
    );
}

// A damper below its precharge is a state of the machine, not an error:
// `solve` runs and warns.
#[test]
fn solve_warns_about_a_bottomed_damper() {
    let o = ripline(&["solve", "tests/circuits/damper_below_precharge.yaml"]);
    assert!(o.status.success(), "{}", text(&o.stderr));
    let err = text(&o.stderr);
    assert!(err.contains("warning: pulsation_damper `damper`"), "{err}");
    assert!(err.contains("the damper is bottomed"), "{err}");
}

/// The README's envelope demo ("Demo: a bottomed damper at standby") is
/// what `assess` prints for networks/loader_work_envelope.yaml, as it
/// stands and with the precharge at 20 bar gauge.
#[test]
fn the_readme_envelope_demo_holds() {
    let readme =
        std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("README.md")).unwrap();
    let o = ripline(&["assess", "networks/loader_work_envelope.yaml"]);
    let out = text(&o.stdout);
    assert_eq!(o.status.code(), Some(3), "{out}");
    assert!(
        out.contains("result: 3 of 4 limits exceeded (exit code 3)"),
        "{out}"
    );
    assert!(
        out.contains("FAIL  `valve block`: rms ≤ 2 bar; worst 6.5386 bar at 2037 rpm, 25 bar, 80 °C, holding, harmonic 1 (305.6 Hz); margin -10.29 dB"),
        "{out}"
    );
    assert!(out.contains("`pump outlet`: 11.2586 bar rms"), "{out}");
    assert!(text(&o.stderr).contains("the damper is bottomed"));
    assert!(readme.contains("(6.54 bar rms at the\nvalve block against a 2 bar limit, margin −10.3 dB; 11.3 bar rms at the pump outlet)"));

    let dir = scratch("readme");
    let demo = std::fs::read_to_string("networks/loader_work_envelope.yaml").unwrap();
    let changed = demo.replace("precharge: 80 bar gauge ", "precharge: 20 bar gauge ");
    assert_ne!(changed, demo);
    let file = write(&dir, "lower_precharge.yaml", &changed);
    let o = ripline(&["assess", &file]);
    let out = text(&o.stdout);
    assert_eq!(o.status.code(), Some(0), "{out}");
    assert!(out.contains("result: every limit met (4 of 4)"), "{out}");
    assert!(
        out.contains("PASS  `valve block`: rms ≤ 2 bar; worst 0.9425 bar at 1891 rpm, 250 bar, 80 °C, holding"),
        "{out}"
    );
    assert!(out.contains("margin +6.54 dB"), "{out}");
    assert!(
        readme.contains(
            "(0.94 bar rms at the valve block, now at 250 bar and 80 °C, margin +6.5 dB)"
        )
    );
}
