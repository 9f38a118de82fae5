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

/// The test envelope with an oil temperature beyond the oil models
/// (-40..150 °C), written to `dir/hot.yaml`.
fn hot_envelope(dir: &Path) -> String {
    write(
        dir,
        "hot.yaml",
        &ENVELOPE.replace(
            "temperatures: [40 degC, 80 degC]",
            "temperatures: [40 degC, 180 degC]",
        ),
    )
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
    let bad = hot_envelope(&dir);
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
    assert!(
        out.contains("over the limit at 6 of 27 envelope points, at 900–1110 rpm, 1964–2300 rpm; it holds at every envelope point over 1110–1964 rpm"),
        "{out}"
    );
    assert!(readme.contains(
        "at 900–1110 rpm and 1964–2300 rpm, and holds\nat every point only over 1110–1964 rpm"
    ));
    // each failing verdict names the damper bottomed wherever it fails
    assert_eq!(
        out.matches("at each of those points `damper` is bottomed")
            .count(),
        3,
        "{out}"
    );
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

/// The lines of a CSV file.
fn csv_lines(path: &Path) -> Vec<String> {
    std::fs::read_to_string(path)
        .unwrap()
        .lines()
        .map(str::to_string)
        .collect()
}

// `solve` over the envelope: every point (4 per case, 12 in all), the
// envelope columns after `point,harmonic`, the ranked report, the JSON
// with every point; `--at` and `--case`/`--pressure` select points.
#[test]
fn solve_runs_over_the_envelope_and_at_a_chosen_point() {
    let dir = scratch("solve");
    let csv = dir.join("solve.csv");
    let json = dir.join("solve.json");
    let o = ripline(&[
        "solve",
        "tests/circuits/envelope_test.yaml",
        "--csv",
        csv.to_str().unwrap(),
        "--json",
        json.to_str().unwrap(),
    ]);
    let out = text(&o.stdout);
    assert!(o.status.success(), "{}", text(&o.stderr));
    assert!(out.contains("over 12 envelope points"), "{out}");
    assert!(
        out.contains("Overall rms ripple at each measurement point, highest first (10 of 20;"),
        "{out}"
    );
    assert!(
        text(&o.stderr).contains("warning: at 6 of 12 envelope points (30 bar, 40 °C, open;"),
        "{}",
        text(&o.stderr)
    );
    let lines = csv_lines(&csv);
    assert_eq!(
        lines[0],
        "point,harmonic,speed_rpm,pressure_pa,temperature_c,case,frequency_hz,amplitude_pa,phase_deg"
    );
    assert!(
        lines[1].starts_with("outlet,1,1500,3000000,40,open,225,"),
        "{}",
        lines[1]
    );
    // 2 harmonics at 2 points, but one point (`end`) cut off by `closed`
    assert_eq!(lines.len(), 1 + 8 * 4 + 4 * 2);
    let doc: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&json).unwrap()).unwrap();
    let points = doc["result"]["envelope_points"].as_array().unwrap();
    assert_eq!(points.len(), 12);
    assert_eq!(points[0]["label"], "30 bar, 40 °C, open");
    let ranked = doc["result"]["ranked"].as_array().unwrap();
    assert_eq!(ranked.len(), 20);
    assert!(ranked[0]["value_pa"].as_f64() >= ranked[1]["value_pa"].as_f64());

    let o = ripline(&[
        "solve",
        "tests/circuits/envelope_test.yaml",
        "--at",
        "200 bar, 80 °C, throttled",
        "--csv",
        csv.to_str().unwrap(),
    ]);
    let out = text(&o.stdout);
    assert!(o.status.success(), "{}", text(&o.stderr));
    assert!(
        out.starts_with("envelope point: 200 bar, 80 °C, throttled\n"),
        "{out}"
    );
    assert!(out.contains("point `outlet`"), "{out}");
    let lines = csv_lines(&csv);
    assert_eq!(lines.len(), 5);
    assert!(lines[1].starts_with("outlet,1,1500,20000000,80,throttled,"));
    let o = ripline(&[
        "solve",
        "tests/circuits/envelope_test.yaml",
        "--case",
        "closed",
        "--pressure",
        "200 bar",
        "--top",
        "1",
    ]);
    let out = text(&o.stdout);
    assert!(out.contains("over 2 envelope points"), "{out}");
    assert!(out.contains("(1 of 2;"), "{out}");
}

// Choosing a point that is not in the envelope is a usage error naming
// what was asked and what the envelope has: exit 2, nothing written.
#[test]
fn a_point_not_in_the_envelope_is_refused() {
    let dir = scratch("no-point");
    let csv = dir.join("s.csv");
    for (option, value, says) in [
        (
            "--at",
            "30 bar, 60 °C, open",
            "the point `30 bar, 60 °C, open` is not in the envelope; it has: `30 bar, 40 °C, open`",
        ),
        (
            "--pressure",
            "120 bar",
            "the mean pressure 120 bar is not in the envelope; it has: 30 bar, 200 bar",
        ),
        (
            "--case",
            "lifting",
            "the load case `lifting` is not in the envelope; it has: `open`, `throttled`, `closed`",
        ),
    ] {
        let o = ripline(&[
            "solve",
            "tests/circuits/envelope_test.yaml",
            option,
            value,
            "--csv",
            csv.to_str().unwrap(),
        ]);
        let err = text(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{err}");
        assert!(err.contains(says), "{err}");
        assert!(!csv.exists());
    }
    let o = ripline(&[
        "solve",
        "networks/crane_pressure_line.yaml",
        "--case",
        "open",
    ]);
    assert_eq!(o.status.code(), Some(2));
    assert!(text(&o.stderr).contains("the file has no `envelope` section"));
}

// `sweep`, `response`, `profile` and `silencer` over the envelope: the
// envelope columns after each table's fixed leading columns, a ranked
// report over the points, and one point chosen with `--at`.
#[test]
fn the_other_commands_run_over_the_envelope() {
    let dir = scratch("commands");
    let file = "tests/circuits/envelope_test.yaml";
    let csv = dir.join("t.csv");
    let c = csv.to_str().unwrap();
    const SILENCER: &[&str] = &[
        "silencer",
        "tests/circuits/envelope_test.yaml",
        "--element",
        "damper",
        "--tap",
        "outlet",
        "--points",
        "50",
    ];
    let cases: [(&[&str], &str, &str); 5] = [
        (
            &["sweep", file, "--speed-step", "100", "--csv", c],
            "point,harmonic,speed_rpm,pressure_pa,temperature_c,case,frequency_hz,amplitude_pa",
            "Worst overall rms ripple over the speed range at each measurement point",
        ),
        (
            &["response", file, "--points", "50", "--csv", c],
            "point,speed_rpm,pressure_pa,temperature_c,case,frequency_hz,amplitude_pa_per_m3s,phase_deg",
            "Peak ripple of each harmonic crossing a resonance",
        ),
        (
            &["profile", file, "--csv", c],
            "element,position_m,speed_rpm,pressure_pa,temperature_c,case,frequency_hz,amplitude_pa,phase_deg",
            "Largest ripple amplitude (peak) along each line",
        ),
        (
            &[SILENCER, &["--csv", c]].concat(),
            "frequency_hz,speed_rpm,pressure_pa,temperature_c,case,transmission_loss_db,insertion_loss_db",
            "Overall rms ripple at the measurement point with the silencer",
        ),
        (
            &[SILENCER, &["--harmonic-csv", c]].concat(),
            "harmonic,speed_rpm,pressure_pa,temperature_c,case,frequency_hz,transmission_loss_db,insertion_loss_db,amplitude_without_pa,amplitude_with_pa",
            "(insertion loss ",
        ),
    ];
    for (args, header, says) in cases {
        let o = ripline(args);
        let out = text(&o.stdout);
        assert!(o.status.success(), "{args:?}: {}", text(&o.stderr));
        assert!(out.contains("over 12 envelope points"), "{args:?}: {out}");
        assert!(out.contains(says), "{args:?}: {out}");
        let lines = csv_lines(&csv);
        assert_eq!(lines[0], header, "{args:?}");
        // every point's rows, in the envelope's order
        let case_column = header.split(',').position(|h| h == "case").unwrap();
        let cases_seen: Vec<&str> = lines[1..]
            .iter()
            .map(|l| l.split(',').nth(case_column).unwrap())
            .collect();
        assert_eq!(cases_seen.first(), Some(&"open"), "{args:?}");
        assert_eq!(cases_seen.last(), Some(&"closed"), "{args:?}");
        std::fs::remove_file(&csv).unwrap();

        // one point: its own report, its rows only
        let mut one: Vec<&str> = args.to_vec();
        one.extend(["--at", "200 bar, 80 °C, throttled"]);
        let o = ripline(&one);
        let out = text(&o.stdout);
        assert!(o.status.success(), "{one:?}: {}", text(&o.stderr));
        assert!(
            out.starts_with("envelope point: 200 bar, 80 °C, throttled\n"),
            "{out}"
        );
        let lines = csv_lines(&csv);
        assert_eq!(lines[0], header);
        assert!(
            lines[1..]
                .iter()
                .all(|l| l.contains(",20000000,80,throttled,")),
            "{one:?}: {}",
            lines[1]
        );
    }
}

// A point that makes the circuit invalid stops every command before any
// work: the point and the envelope key named, exit 2, nothing written.
#[test]
fn an_invalid_envelope_point_stops_every_command() {
    let dir = scratch("bad-point-commands");
    let bad = hot_envelope(&dir);
    let csv = dir.join("out.csv");
    let c = csv.to_str().unwrap();
    for args in [
        vec!["solve", &bad, "--csv", c],
        vec!["sweep", &bad, "--csv", c],
        vec!["response", &bad, "--csv", c],
        vec!["profile", &bad, "--csv", c],
        vec![
            "silencer",
            &bad,
            "--element",
            "damper",
            "--tap",
            "outlet",
            "--csv",
            c,
        ],
        // chosen by its parts: still located
        vec![
            "solve",
            &bad,
            "--temperature",
            "180 degC",
            "--case",
            "open",
            "--csv",
            c,
        ],
    ] {
        let o = ripline(&args);
        let err = text(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {err}");
        assert!(err.contains("hot.yaml:26:"), "{args:?}: {err}");
        assert!(
            err.contains("envelope.temperatures[1]: at envelope point `30 bar, 180 °C, open`: "),
            "{args:?}: {err}"
        );
        assert!(!csv.exists(), "{args:?}");
        assert!(text(&o.stdout).is_empty(), "{args:?}");
    }
}

// `sweep` over the envelope finds the worst overall rms that `assess`
// reports for the same envelope (the README demo: 11.2586 bar rms at the
// pump outlet at 25 bar, 80 °C, holding): both refine the worst speed with
// the same routine from the envelope's speed range.
#[test]
fn sweep_over_the_envelope_agrees_with_assess() {
    let dir = scratch("sweep-assess");
    let json = dir.join("s.json");
    let o = ripline(&[
        "sweep",
        "networks/loader_work_envelope.yaml",
        "--json",
        json.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", text(&o.stderr));
    let out = text(&o.stdout);
    assert!(out.contains("over 27 envelope points"), "{out}");
    let doc: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&json).unwrap()).unwrap();
    let top = &doc["result"]["ranked"][0];
    assert_eq!(top["label"], "25 bar, 80 °C, holding");
    assert_eq!(top["subject"], "`pump outlet`");
    let bar = top["value_pa"].as_f64().unwrap() / 1e5;
    assert!((bar - 11.2586).abs() < 5e-5, "{bar}");
    assert!(
        out.contains("one point's full report: ripline sweep … --at \"25 bar, 80 °C, holding\""),
        "{out}"
    );
}

// The envelope's `speed` is the machine's operating range: `response`,
// `silencer`-style sweeps and `tune` read it before the pump's own
// `speed_range` (here 1000–2000 rpm), as `assess` does, and say where the
// range came from; `--speed-range` still overrides it. The harmonic bands
// follow: the lowest pumping frequency is 1200 rpm × 9 pistons / 60 = 180 Hz
// (f = n·z, the definition of the pumping frequency).
#[test]
fn the_envelope_speed_range_is_the_operating_range() {
    let dir = scratch("envelope-speed");
    let file = write(
        &dir,
        "speed.yaml",
        &ENVELOPE.replace("envelope:\n", "envelope:\n  speed: [1200 rpm, 1800 rpm]\n"),
    );
    let read = |name: &str| -> serde_json::Value {
        serde_json::from_str(&std::fs::read_to_string(dir.join(name)).unwrap()).unwrap()
    };
    let json = dir.join("response.json");
    let o = ripline(&[
        "response",
        &file,
        "--at",
        "30 bar, 40 °C, open",
        "--points",
        "200",
        "--json",
        json.to_str().unwrap(),
    ]);
    let out = text(&o.stdout);
    assert!(o.status.success(), "{}", text(&o.stderr));
    assert!(
        out.contains("1200–1800 rpm (the envelope's `speed`)"),
        "{out}"
    );
    let doc = read("response.json");
    let r = &doc["result"]["envelope_points"][0]["result"];
    assert_eq!(r["speed_range"]["origin"], "envelope");
    assert!((r["speed_range"]["low_rev_s"].as_f64().unwrap() - 20.0).abs() < 1e-12);
    assert!((r["speed_range"]["high_rev_s"].as_f64().unwrap() - 30.0).abs() < 1e-12);
    let band = &r["bands"][0];
    assert!(
        (band["low_hz"].as_f64().unwrap() - 180.0).abs() < 1e-9,
        "{band}"
    );
    assert!(
        (band["high_hz"].as_f64().unwrap() - 270.0).abs() < 1e-9,
        "{band}"
    );

    let o = ripline(&[
        "response",
        &file,
        "--at",
        "30 bar, 40 °C, open",
        "--points",
        "200",
        "--speed-range",
        "1000..1100",
    ]);
    assert!(o.status.success(), "{}", text(&o.stderr));
    assert!(
        text(&o.stdout).contains("1000–1100 rpm (from --speed-range)"),
        "{}",
        text(&o.stdout)
    );

    let json = dir.join("sweep.json");
    let o = ripline(&[
        "sweep",
        &file,
        "--at",
        "30 bar, 40 °C, open",
        "--json",
        json.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", text(&o.stderr));
    let inputs = read("sweep.json")["result"]["envelope_points"][0]["result"]["inputs"].clone();
    let range = inputs
        .as_array()
        .unwrap()
        .iter()
        .find(|i| i["name"] == "speed_range")
        .unwrap_or_else(|| panic!("{inputs}"))
        .clone();
    assert_eq!(range["origin"], "file", "{range}");
}
