//! End-to-end tests of the `ripline` command.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn ripline(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_ripline"))
        .args(args)
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .output()
        .expect("the ripline binary runs")
}

fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

/// A fresh scratch folder for one test.
fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("ripline-cli-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

fn files_in(dir: &Path) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    v.sort();
    v
}

#[test]
fn demo_solves_and_reports_every_point() {
    let o = ripline(&["solve"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let out = stdout(&o);
    for point in [
        "pump outlet",
        "line midpoint",
        "tee",
        "gauge",
        "valve block",
    ] {
        assert!(
            out.contains(&format!("point `{point}`")),
            "missing {point}:\n{out}"
        );
    }
    assert!(out.contains("pumping frequency 300.00 Hz"), "{out}");
    assert!(out.contains("rms") && out.contains("dB") && out.contains("peak-to-peak"));
    assert!(!out.contains("NaN") && !out.contains("inf"), "{out}");
}

#[test]
fn csv_has_the_header_and_one_row_per_point_and_harmonic() {
    let dir = scratch("csv");
    let csv = dir.join("ripple.csv");
    let o = ripline(&["solve", "--harmonics", "7", "--csv", csv.to_str().unwrap()]);
    assert!(o.status.success(), "{}", stderr(&o));
    let text = std::fs::read_to_string(&csv).unwrap();
    let mut lines = text.lines();
    assert_eq!(
        lines.next(),
        Some("point,harmonic,frequency_hz,amplitude_pa,phase_deg")
    );
    let rows: Vec<Vec<String>> = lines
        .map(|l| l.split(',').map(str::to_string).collect())
        .collect();
    assert_eq!(rows.len(), 5 * 7);
    for point in ["pump outlet", "valve block"] {
        let mine: Vec<_> = rows.iter().filter(|r| r[0] == point).collect();
        assert_eq!(mine.len(), 7);
        for (k, r) in mine.iter().enumerate() {
            assert_eq!(r[1], (k + 1).to_string());
            // frequency = k · 300 Hz for the demo pump (1500 rpm × 12 teeth)
            let f: f64 = r[2].parse().unwrap();
            assert!((f - 300.0 * (k + 1) as f64).abs() < 1e-9);
            let a: f64 = r[3].parse().unwrap();
            assert!(a.is_finite() && a >= 0.0);
        }
    }
    assert_eq!(
        files_in(&dir),
        vec!["ripple.csv"],
        "no temporary file left behind"
    );
    std::fs::remove_dir_all(dir).unwrap();
}

#[test]
fn speed_override_moves_the_harmonics() {
    let o = ripline(&["solve", "--speed", "1800", "--harmonics", "2"]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(stdout(&o).contains("pumping frequency 360.00 Hz"));
}

#[test]
fn plots_are_written_as_svg_and_png() {
    let dir = scratch("plot");
    for name in ["bars.svg", "bars.png"] {
        let path = dir.join(name);
        let o = ripline(&["solve", "--plot", path.to_str().unwrap()]);
        assert!(o.status.success(), "{}", stderr(&o));
        let bytes = std::fs::read(&path).unwrap();
        assert!(bytes.len() > 1000, "{name} is too small");
    }
    assert!(
        std::fs::read_to_string(dir.join("bars.svg"))
            .unwrap()
            .contains("<svg")
    );
    assert!(
        std::fs::read(dir.join("bars.png"))
            .unwrap()
            .starts_with(b"\x89PNG")
    );
    std::fs::remove_dir_all(dir).unwrap();
}

#[test]
fn check_reports_what_the_circuit_holds() {
    let o = ripline(&["check", "networks/crane_pressure_line.yaml"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let out = stdout(&o);
    assert!(out.contains("nodes (4)") && out.contains("elements (6)") && out.contains("taps (5)"));
    assert!(out.trim_end().ends_with("OK"));
}

#[test]
fn every_example_network_checks() {
    for entry in std::fs::read_dir(Path::new(env!("CARGO_MANIFEST_DIR")).join("networks")).unwrap()
    {
        let path = entry.unwrap().path();
        if path.extension().is_some_and(|e| e == "yaml") {
            let o = ripline(&["check", path.to_str().unwrap()]);
            assert!(o.status.success(), "{}: {}", path.display(), stderr(&o));
        }
    }
}

/// Each malformed circuit in tests/bad/ must fail with exit code 2 and a
/// message that names the file, the place and the fault.
const BAD_FILES: &[(&str, &str)] = &[
    (
        "absurd_bore.yaml",
        ":50:5: elements[0].bore: 12 m is outside the plausible range",
    ),
    ("binary_junk.yaml", "not UTF-8 text"),
    (
        "damper_below_precharge.yaml",
        ":71:5: elements[3].operating_pressure: the operating pressure 51.01 bar abs is below the precharge 121.01 bar abs",
    ),
    (
        "disconnected.yaml",
        "element `stray` is not connected to any pump",
    ),
    (
        "duplicate_element.yaml",
        ":54:5: elements[1].name: duplicate element name `pressure_line`",
    ),
    ("duplicate_key.yaml", "duplicate field `length`"),
    ("empty.yaml", "the file is empty"),
    (
        "gas_pressure_without_abs_or_gauge.yaml",
        ":70:16: elements[3].precharge: `120 bar`: a gas pressure must say whether it is absolute or gauge",
    ),
    (
        "harmonic_zero.yaml",
        ":30:5: pump.flow_ripple[0].harmonic: harmonic order must be between 1 and 200",
    ),
    (
        "helmholtz_without_neck_bore.yaml",
        ":66:3: elements[3]: a `helmholtz_resonator` needs the key `neck_bore`",
    ),
    (
        "huge_number.yaml",
        ":17:17: fluid.bulk_modulus: `1e300 GPa` is not a finite number",
    ),
    (
        "infinite_number.yaml",
        "fluid.density: density must be a finite number",
    ),
    (
        "key_for_other_kind.yaml",
        "key `bore` does not apply to a `volume`",
    ),
    (
        "key_for_other_silencer.yaml",
        ":68:5: elements[3].end_correction: key `end_correction` does not apply to a `side_branch`",
    ),
    ("missing_wall.yaml", "a `tube` needs its wall"),
    (
        "negative_length.yaml",
        ":49:5: elements[0].length: must be greater than zero",
    ),
    ("no_pump.yaml", "the circuit has no `pump`"),
    ("not_yaml.yaml", "not_yaml.yaml:1:"),
    (
        "orifice_without_resistance.yaml",
        "needs either `resistance`, or both `mean_flow` and `pressure_drop`",
    ),
    (
        "polytropic_index_out_of_range.yaml",
        ":72:5: elements[3].polytropic_index: the polytropic index must be between 1.0",
    ),
    (
        "pump_on_missing_node.yaml",
        ":25:3: pump.node: no element reaches node `pump_outlet`",
    ),
    (
        "same_from_to.yaml",
        "`from` and `to` are the same node `pump_out`",
    ),
    (
        "tap_beyond_tube.yaml",
        ":89:3: taps[1].distance: distance 2.8 m is outside tube `pressure_line`",
    ),
    (
        "tap_on_missing_element.yaml",
        "taps[1].element: no element is called `suction_line`",
    ),
    (
        "unknown_key.yaml",
        ":53:5: elements[0]: unknown field `colour`",
    ),
    ("unknown_kind.yaml", "unknown variant `bucket`"),
    (
        "unknown_material.yaml",
        "unknown material `unobtainium`; use one of: steel",
    ),
    (
        "unknown_unit.yaml",
        ":49:13: elements[0].length: unknown unit `furlong` for a length",
    ),
    (
        "unreached_node.yaml",
        "taps[3].node: no element reaches node `nowhere`",
    ),
    (
        "wall_too_thick.yaml",
        "wall thickness 7.000 mm is not less than the bore radius 6.000 mm",
    ),
    (
        "wrong_type.yaml",
        ":27:21: pump.pumping_elements: invalid type: string \"twelve\"",
    ),
    (
        "zero_bore.yaml",
        "elements[0].bore: must be greater than zero",
    ),
];

#[test]
fn bad_circuit_files_exit_2_with_a_located_message_and_write_nothing() {
    let dir = scratch("bad");
    let csv = dir.join("out.csv");
    let plot = dir.join("out.svg");
    let listed: Vec<&str> = BAD_FILES.iter().map(|(f, _)| *f).collect();
    for entry in std::fs::read_dir(Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/bad")).unwrap()
    {
        let name = entry.unwrap().file_name().to_string_lossy().into_owned();
        assert!(
            listed.contains(&name.as_str()),
            "tests/bad/{name} has no expectation in BAD_FILES"
        );
    }
    for (file, fragment) in BAD_FILES {
        let path = format!("tests/bad/{file}");
        for cmd in ["solve", "check", "response"] {
            let mut args = vec![cmd, path.as_str()];
            if cmd != "check" {
                args.extend([
                    "--csv",
                    csv.to_str().unwrap(),
                    "--plot",
                    plot.to_str().unwrap(),
                ]);
            }
            let o = ripline(&args);
            let err = stderr(&o);
            assert_eq!(o.status.code(), Some(2), "{cmd} {file}: {err}");
            assert!(
                err.contains(&path),
                "{file}: message does not name the file: {err}"
            );
            assert!(
                err.contains(fragment),
                "{file}: expected `{fragment}` in: {err}"
            );
            assert!(
                !err.contains("panicked") && !err.contains("RUST_BACKTRACE"),
                "{err}"
            );
        }
        assert!(
            files_in(&dir).is_empty(),
            "{file}: an output file was written"
        );
    }
    std::fs::remove_dir_all(dir).unwrap();
}

#[test]
fn a_lossless_circuit_at_its_resonance_is_a_clear_error_not_nan() {
    // An ideal flow source (no internal volume) into a lossless 2 m line open
    // to tank: Zin = jZ0 tan(kL) has a pole at c/4L = 168.75 Hz for c =
    // 1350 m/s (Kinsler et al.). Pumping frequency 168.75 Hz = 843.75 rpm × 12.
    let dir = scratch("singular");
    let file = dir.join("singular.yaml");
    std::fs::write(
        &file,
        "fluid: {density: 870, bulk_modulus: 1585575000, viscosity: 32 cSt}\n\
         line_model: lossless\n\
         pump:\n  node: a\n  speed: 843.75 rpm\n  pumping_elements: 12\n\
         \x20 flow_ripple: [{harmonic: 1, amplitude: 1 L/min}]\n\
         \x20 source_impedance: {volume: 0}\n\
         elements:\n\
         \x20 - {name: line, kind: tube, from: a, to: b, length: 2 m, bore: 10 mm, rigid: true}\n\
         \x20 - {name: reservoir, kind: tank, at: b}\n",
    )
    .unwrap();
    let csv = dir.join("x.csv");
    let o = ripline(&[
        "solve",
        file.to_str().unwrap(),
        "--csv",
        csv.to_str().unwrap(),
    ]);
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(1), "{err}");
    assert!(err.contains("no unique solution at 168.750000 Hz"), "{err}");
    assert!(!stdout(&o).contains("NaN") && !csv.exists());
    std::fs::remove_dir_all(dir).unwrap();
}

#[test]
fn bad_options_are_usage_errors() {
    for args in [
        vec!["solve", "--harmonics", "0"],
        vec!["solve", "--speed", "fast"],
        vec!["solve", "--plot", "x.jpg"],
        vec!["solve", "--csv", "/no/such/folder/x.csv"],
        vec!["solve", "no_such_file.yaml"],
        vec!["frobnicate"],
    ] {
        let o = ripline(&args);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {}", stderr(&o));
    }
}

#[test]
fn the_readme_example_circuit_is_valid() {
    let readme =
        std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("README.md")).unwrap();
    let start = readme.find("```yaml\n").expect("README has a YAML example") + 8;
    let len = readme[start..].find("```").unwrap();
    let dir = scratch("readme");
    let file = dir.join("example.yaml");
    std::fs::write(&file, &readme[start..start + len]).unwrap();
    let o = ripline(&["solve", file.to_str().unwrap()]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(stdout(&o).contains("point `mid`"));
    std::fs::remove_dir_all(dir).unwrap();
}

#[test]
fn response_finds_the_crossings_of_the_demo_and_writes_csv_and_plot() {
    let dir = scratch("response");
    let (csv, plot) = (dir.join("r.csv"), dir.join("r.svg"));
    let o = ripline(&[
        "response",
        "networks/drill_rig_feed.yaml",
        "--points",
        "400",
        "--csv",
        csv.to_str().unwrap(),
        "--plot",
        plot.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let out = stdout(&o);
    assert!(
        out.contains("speed range: 800–2400 rpm (the pump's `speed_range`)"),
        "{out}"
    );
    // The first line resonance (about 130 Hz) lies inside harmonic 1's band
    // 120–360 Hz (9 pistons × 800–2400 rpm).
    assert!(out.contains("CROSSED by harmonic 1 at"), "{out}");
    assert!(
        out.contains("harmonic  1:    120.00 –    360.00 Hz"),
        "{out}"
    );
    assert!(!out.contains("NaN") && !out.contains("inf "), "{out}");
    let text = std::fs::read_to_string(&csv).unwrap();
    let mut lines = text.lines();
    assert_eq!(
        lines.next(),
        Some("point,frequency_hz,amplitude_pa_per_m3s,phase_deg")
    );
    let rows: Vec<Vec<String>> = lines
        .map(|l| l.split(',').map(str::to_string).collect())
        .collect();
    assert_eq!(rows.len(), 3 * 400);
    for point in [
        "pump outlet",
        "head block",
        "impedance seen by pump axial piston pump",
    ] {
        let mine: Vec<_> = rows.iter().filter(|r| r[0] == point).collect();
        assert_eq!(mine.len(), 400, "{point}");
        for r in mine {
            let a: f64 = r[2].parse().unwrap();
            assert!(a.is_finite() && a > 0.0);
        }
    }
    assert!(std::fs::read_to_string(&plot).unwrap().contains("<svg"));
    assert_eq!(files_in(&dir), vec!["r.csv", "r.svg"]);
    std::fs::remove_dir_all(dir).unwrap();
}

#[test]
fn response_says_where_the_speed_range_comes_from() {
    let o = ripline(&["response", "--points", "200"]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(
        stdout(&o).contains("speed range: none given"),
        "{}",
        stdout(&o)
    );
    let o = ripline(&["response", "--points", "200", "--speed-range", "1000..2000"]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(stdout(&o).contains("1000–2000 rpm (from --speed-range)"));
}

#[test]
fn silencer_reports_transmission_and_insertion_loss_with_the_caution() {
    let dir = scratch("silencer");
    let (csv, hcsv, plot) = (dir.join("l.csv"), dir.join("h.csv"), dir.join("l.png"));
    let o = ripline(&[
        "silencer",
        "networks/drill_rig_feed_damper.yaml",
        "--element",
        "damper",
        "--tap",
        "head block",
        "--points",
        "300",
        "--csv",
        csv.to_str().unwrap(),
        "--harmonic-csv",
        hcsv.to_str().unwrap(),
        "--plot",
        plot.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let out = stdout(&o);
    assert!(
        out.contains("gas volume at the operating pressure"),
        "{out}"
    );
    assert!(out.contains("the silencer removed"), "{out}");
    assert!(out.contains("CAUTION: a gas-charged pulsation damper is a pressure vessel"));
    let text = std::fs::read_to_string(&csv).unwrap();
    assert!(text.starts_with("frequency_hz,transmission_loss_db,insertion_loss_db\n"));
    assert_eq!(text.lines().count(), 301);
    let h = std::fs::read_to_string(&hcsv).unwrap();
    let mut lines = h.lines();
    assert_eq!(
        lines.next(),
        Some(
            "harmonic,frequency_hz,transmission_loss_db,insertion_loss_db,amplitude_without_pa,amplitude_with_pa"
        )
    );
    // Harmonic 1 at 1800 rpm (270 Hz) is cut by the damper.
    let first: Vec<f64> = lines
        .next()
        .unwrap()
        .split(',')
        .map(|v| v.parse().unwrap())
        .collect();
    assert_eq!(first[0], 1.0);
    assert!((first[1] - 270.0).abs() < 1e-9);
    assert!(first[3] > 10.0 && first[4] > first[5], "{first:?}");
    assert!(std::fs::read(&plot).unwrap().starts_with(b"\x89PNG"));
    std::fs::remove_dir_all(dir).unwrap();
}

#[test]
fn tune_sizes_the_damper_and_shows_the_caution_without_a_bar_when_piped() {
    let o = ripline(&[
        "tune",
        "networks/drill_rig_feed_damper.yaml",
        "--element",
        "damper",
        "--vary",
        "gas_volume=0.05L..2L",
        "--tap",
        "head block",
        "--samples",
        "15",
        "--speeds",
        "9",
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let out = stdout(&o);
    for want in [
        "without the silencer:",
        "as in the file:",
        "tuned:",
        "steepness",
        "gas_volume    −10 %:",
        "in the circuit file, set: gas_volume:",
        "CAUTION: a gas-charged pulsation damper is a pressure vessel",
    ] {
        assert!(out.contains(want), "missing `{want}`:\n{out}");
    }
    // No progress bar on a pipe.
    assert!(!stderr(&o).contains("searching"), "{}", stderr(&o));
}

#[test]
fn bad_options_of_the_sizing_commands_are_usage_errors_and_write_nothing() {
    let dir = scratch("sizing-usage");
    let csv = dir.join("x.csv");
    let csv = csv.to_str().unwrap();
    let demo = "networks/drill_rig_feed_damper.yaml";
    for args in [
        vec!["response", demo, "--band", "100..50", "--csv", csv],
        vec!["response", demo, "--margin", "150%", "--csv", csv],
        vec!["response", demo, "--speed-range", "fast", "--csv", csv],
        vec!["response", demo, "--pump", "nobody", "--csv", csv],
        vec!["silencer", demo, "--element", "nosuch", "--csv", csv],
        vec![
            "silencer",
            demo,
            "--element",
            "damper",
            "--tap",
            "nowhere",
            "--csv",
            csv,
        ],
        vec![
            "silencer",
            demo,
            "--element",
            "damper",
            "--element",
            "damper",
            "--csv",
            csv,
        ],
        vec!["tune", demo, "--element", "damper", "--vary", "colour=1..2"],
        vec![
            "tune",
            demo,
            "--element",
            "damper",
            "--vary",
            "precharge=40 bar..80 bar",
        ],
        vec![
            "tune",
            demo,
            "--element",
            "damper",
            "--vary",
            "neck_length=2m..1m",
        ],
        vec![
            "tune",
            demo,
            "--element",
            "pressure_line",
            "--vary",
            "length=1m..2m",
        ],
        vec![
            "tune",
            demo,
            "--element",
            "damper",
            "--vary",
            "length=1m..2m",
            "--tap",
            "head block",
        ],
        vec![
            "tune",
            demo,
            "--element",
            "damper",
            "--vary",
            "gas_volume=0.1L..1L",
        ],
    ] {
        let o = ripline(&args);
        let err = stderr(&o);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {err}");
        assert!(!err.contains("panicked"), "{err}");
    }
    assert!(files_in(&dir).is_empty());
    std::fs::remove_dir_all(dir).unwrap();
}

/// The before/after numbers quoted in README.md ("Demo: a resonance crossing
/// cured by a sized damper") are what the commands print for the demo files.
#[test]
fn the_readme_demo_numbers_hold() {
    let readme =
        std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("README.md")).unwrap();
    for (tap, without, with, readme_without, readme_with) in [
        (
            "head block",
            "4.1750 bar rms",
            "6.991 kPa rms",
            "4.175 bar",
            "0.0070 bar (−35.5 dB)",
        ),
        (
            "pump outlet",
            "7.4675 bar rms",
            "0.4214 bar rms",
            "7.468 bar",
            "0.421 bar (−25.0 dB)",
        ),
    ] {
        // Bounds that pin the damper to the file's design.
        let o = ripline(&[
            "tune",
            "networks/drill_rig_feed_damper.yaml",
            "--element",
            "damper",
            "--vary",
            "gas_volume=0.16999L..0.17001L",
            "--samples",
            "3",
            "--tap",
            tap,
        ]);
        assert!(o.status.success(), "{}", stderr(&o));
        let out = stdout(&o);
        assert!(
            out.contains(&format!("without the silencer:   {without}")),
            "{out}"
        );
        assert!(
            out.contains(&format!("as in the file:         {with}")),
            "{out}"
        );
        assert!(
            readme.contains(readme_without) && readme.contains(readme_with),
            "{tap}"
        );
    }
    let o = ripline(&[
        "silencer",
        "networks/drill_rig_feed_damper.yaml",
        "--element",
        "damper",
        "--tap",
        "head block",
        "--points",
        "50",
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let out = stdout(&o);
    assert!(
        out.contains("         1        270.00     47.90     55.51"),
        "{out}"
    );
    assert!(
        out.contains("         2        540.00     18.24     18.27"),
        "{out}"
    );
    assert!(readme.contains("55.5 dB on harmonic 1 and 18.3 dB on harmonic 2"));
    let o = ripline(&[
        "response",
        "networks/drill_rig_feed.yaml",
        "--points",
        "800",
    ]);
    let out = stdout(&o);
    assert!(
        out.contains("130.34 Hz  CROSSED by harmonic 1 at 869 rpm"),
        "{out}"
    );
    assert!(
        out.contains(
            "289.21 Hz  CROSSED by harmonic 1 at 1928 rpm (≈ 10.5764 bar at `pump outlet`)"
        ),
        "{out}"
    );
    assert!(readme.contains("130.3 Hz at 869 rpm and 289.2 Hz at 1928 rpm"));
}
