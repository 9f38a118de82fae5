//! End-to-end tests of the output forms: JSON read back against the CSV
//! and the text, waveforms, units per column, and the one option
//! vocabulary of the commands.

use ripline::render::table::sig;
use serde_json::Value;
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
    let dir = std::env::temp_dir().join(format!("ripline-out-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

fn path(dir: &Path, name: &str) -> String {
    dir.join(name).to_str().unwrap().to_string()
}

/// Runs a command that must succeed and returns its stdout.
fn ok(args: &[&str]) -> String {
    let o = ripline(args);
    assert!(o.status.success(), "{args:?}: {}", stderr(&o));
    stdout(&o)
}

/// The JSON document at `path`, with its envelope checked.
fn json(path: &str, command: &str) -> Value {
    let v: Value = serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap();
    assert_eq!(v["schema_version"], 1);
    assert_eq!(v["program"], "ripline");
    assert_eq!(v["command"], command);
    v["result"].clone()
}

/// CSV rows (header dropped), split on commas (no quoted fields here).
fn csv_rows(path: &str) -> Vec<Vec<String>> {
    std::fs::read_to_string(path)
        .unwrap()
        .lines()
        .skip(1)
        .map(|l| l.split(',').map(str::to_string).collect())
        .collect()
}

fn num(v: &Value) -> f64 {
    v.as_f64().unwrap_or_else(|| panic!("not a number: {v}"))
}

/// Equal up to the last bits (serde_json's default parser may be one ulp
/// off the shortest round-trip digits both writers print).
fn same(a: f64, b: f64) {
    assert!(
        (a - b).abs() <= 4.0 * f64::EPSILON * a.abs().max(b.abs()),
        "{a} {b}"
    );
}

/// `solve --json` holds the same numbers as the CSV (both print the
/// shortest round-trip form of the same f64) and the text (to the
/// printed digits); the overall rms is √(Σ|P_k|²/2) of the listed
/// amplitudes (methods.md §7.4, the rms of a sum of sinusoids).
#[test]
fn solve_json_agrees_with_csv_and_text() {
    let dir = scratch("solve-json");
    let (j, c) = (path(&dir, "r.json"), path(&dir, "r.csv"));
    let text = ok(&["solve", "--json", &j, "--csv", &c]);
    let r = json(&j, "solve");
    let rows = csv_rows(&c);
    let source = &r["sources"][0];
    let mut i = 0;
    for point in source["points"].as_array().unwrap() {
        let mut sum = 0.0;
        for h in point["harmonics"].as_array().unwrap() {
            let row = &rows[i];
            i += 1;
            assert_eq!(row[0], point["point"].as_str().unwrap());
            assert_eq!(row[1], h["order"].to_string());
            let a = num(&h["pressure_pa"]["amplitude"]);
            same(row[3].parse().unwrap(), a);
            same(row[4].parse().unwrap(), num(&h["pressure_pa"]["phase_deg"]));
            sum += a * a / 2.0;
        }
        let rms = num(&point["rms_pa"]);
        assert!((rms - sum.sqrt()).abs() <= 1e-12 * rms);
        // the text prints the rms in bar (the demo's column unit) with 4
        // significant digits
        assert!(
            text.contains(&format!("overall: {} bar rms", sig(rms / 1e5, 4))),
            "{rms} {text}"
        );
    }
    assert_eq!(i, rows.len());
    assert_eq!(r["inputs"][1]["name"], "db_ref");
    assert_eq!(r["inputs"][1]["origin"], "default");
    std::fs::remove_dir_all(dir).unwrap();
}

/// The waveform over two shaft revolutions: p(θ) = Σ Re{P_k e^{jkzθ}}
/// (methods.md §7.3), so at θ = 0 it is Σ |P_k| cos φ_k, it repeats every
/// pumping period 360°/z, and the range of its samples is the reported
/// peak-to-peak value (the samples can only miss the extremes slightly).
#[test]
fn solve_waveform_is_the_sum_of_the_harmonics() {
    let dir = scratch("waveform");
    let (w, j, svg) = (
        path(&dir, "w.csv"),
        path(&dir, "r.json"),
        path(&dir, "w.svg"),
    );
    ok(&["solve", "--waveform", &w, "--waveform", &svg, "--json", &j]);
    assert!(std::fs::read_to_string(&svg).unwrap().contains("<svg"));
    let r = json(&j, "solve");
    let header = std::fs::read_to_string(&w).unwrap();
    assert!(header.starts_with("point,shaft_angle_deg,time_s,pressure_pa\n"));
    let rows = csv_rows(&w);
    let point = &r["sources"][0]["points"][0];
    let name = point["point"].as_str().unwrap();
    let mine: Vec<(f64, f64, f64)> = rows
        .iter()
        .filter(|r| r[0] == name)
        .map(|r| {
            (
                r[1].parse().unwrap(),
                r[2].parse().unwrap(),
                r[3].parse().unwrap(),
            )
        })
        .collect();
    assert_eq!(mine.first().unwrap().0, 0.0);
    assert!((mine.last().unwrap().0 - 720.0).abs() < 1e-9);
    // two revolutions at 1500 rpm take 80 ms
    assert!((mine.last().unwrap().1 - 0.08).abs() < 1e-12);
    let at_zero: f64 = point["harmonics"]
        .as_array()
        .unwrap()
        .iter()
        .map(|h| {
            num(&h["pressure_pa"]["amplitude"])
                * num(&h["pressure_pa"]["phase_deg"]).to_radians().cos()
        })
        .sum();
    assert!((mine[0].2 - at_zero).abs() < 1e-9 * at_zero.abs().max(1.0));
    // 12 teeth: the waveform repeats every 30°
    let period = mine.iter().position(|s| (s.0 - 30.0).abs() < 1e-9).unwrap();
    assert!((mine[period].2 - mine[0].2).abs() < 1e-6 * at_zero.abs().max(1.0));
    let (lo, hi) = mine.iter().fold((f64::MAX, f64::MIN), |(lo, hi), s| {
        (lo.min(s.2), hi.max(s.2))
    });
    let pp = num(&point["peak_to_peak_pa"]);
    assert!(
        hi - lo <= pp * (1.0 + 1e-12) && hi - lo > 0.99 * pp,
        "{} {pp}",
        hi - lo
    );
    let wave = &point["waveform"];
    assert!((num(&wave["max"][1]) - num(&wave["min"][1]) - pp).abs() < 1e-9 * pp);
    std::fs::remove_dir_all(dir).unwrap();
}

/// `profile --pump` on the engine example (two pumps on one shaft, each
/// feeding its own line): harmonic 1 of the steering pump (12 × 1800 rpm
/// = 360 Hz) is order 4 of the shaft fundamental (gcd(9, 12) = 3 → 90 Hz),
/// where the 9-piston work pump has no harmonic (4·3/9 is not whole). The
/// pressure at the steering pump's outlet must be what `solve` finds
/// there at order 4 (the same network solve), and the work pump's lines,
/// which carry no ripple at this frequency, are not drawn as flat lines.
#[test]
fn profile_of_the_second_pump_matches_solve_and_leaves_out_silent_lines() {
    let dir = scratch("profile-pump");
    let (p, s) = (path(&dir, "p.json"), path(&dir, "s.json"));
    let example = "networks/loader_engine_pumps.yaml";
    let text = ok(&["profile", example, "--pump", "steering pump", "--json", &p]);
    ok(&["solve", example, "--json", &s]);
    let profile = json(&p, "profile");
    let solve = json(&s, "solve");
    assert_eq!(num(&profile["freq_hz"]), 360.0);
    let lines = profile["lines"].as_array().unwrap();
    for l in lines {
        let reached = l["reached"].as_bool().unwrap();
        assert_eq!(reached, l["name"] == "steering_line", "{l}");
    }
    assert!(
        text.contains("no ripple from shaft `engine` at this frequency"),
        "{text}"
    );
    let node = profile["nodes"]
        .as_array()
        .unwrap()
        .iter()
        .find(|n| n["name"] == "steer_out")
        .unwrap();
    let at_outlet = num(&node["pressure_pa"]["amplitude"]);
    let order4 = solve["sources"][0]["points"]
        .as_array()
        .unwrap()
        .iter()
        .find(|p| p["point"] == "steering pump outlet")
        .unwrap()["harmonics"]
        .as_array()
        .unwrap()
        .iter()
        .find(|h| h["order"] == 4)
        .unwrap()["pressure_pa"]["amplitude"]
        .clone();
    assert!(
        (at_outlet - num(&order4)).abs() < 1e-9 * at_outlet,
        "{at_outlet} {order4}"
    );
    assert!(at_outlet > 1e4);
    std::fs::remove_dir_all(dir).unwrap();
}

/// `check` lists each pump's source flow ripple. The drilling-rig pump's
/// table is given at 1800 rpm (harmonic 1: 2.2 L/min peak); a table scales
/// in proportion to speed (README, `flow_ripple`), so at 3600 rpm it is
/// 4.4 L/min = 7.3333e-5 m³/s at 540 Hz. The CSV, the JSON and the text
/// agree, and the chart is written.
#[test]
fn check_lists_the_source_flow_ripple_at_the_requested_speed() {
    let dir = scratch("check-source");
    let (c, j, svg) = (
        path(&dir, "q.csv"),
        path(&dir, "q.json"),
        path(&dir, "q.svg"),
    );
    let text = ok(&[
        "check",
        "networks/drill_rig_feed_damper.yaml",
        "--speed",
        "3600",
        "--csv",
        &c,
        "--json",
        &j,
        "--plot",
        &svg,
    ]);
    assert!(std::fs::read_to_string(&svg).unwrap().contains("<svg"));
    let rows = csv_rows(&c);
    assert_eq!(rows[0][0], "axial piston pump");
    assert_eq!(rows[0][2].parse::<f64>().unwrap(), 540.0);
    let q1: f64 = rows[0][3].parse().unwrap();
    assert!((q1 - 4.4e-3 / 60.0).abs() < 1e-12 * q1, "{q1}");
    let r = json(&j, "check");
    let pump = &r["pumps"][0];
    assert_eq!(pump["speed_origin"], "request");
    same(num(&pump["harmonics"][0]["flow_m3_s"]["amplitude"]), q1);
    assert!(text.contains("source flow ripple at 3600 rpm"), "{text}");
    assert!(text.contains("amplitude L/min"), "{text}");
    assert!(
        text.contains("         1        540.00            4.400"),
        "{text}"
    );
    // the damper's gas pressures are echoed gauge first, as the file has them
    assert!(
        text.contains("precharge of 120.0 bar gauge (121.0 bar abs)"),
        "{text}"
    );
    assert!(r["cautions"][0].as_str().unwrap().starts_with("CAUTION"));
    std::fs::remove_dir_all(dir).unwrap();
}

/// `response --pump` for the second pump of a shaft takes the shaft's
/// speed range (stated by the other pump): harmonic k of the 12-tooth
/// steering pump sweeps k·z·n = 160..480 Hz for k = 1 over 800..2400 rpm.
/// The JSON's resonances and curves agree with the text and the CSV.
#[test]
fn response_of_the_second_pump_uses_the_shaft_speed_range() {
    let dir = scratch("response-pump");
    let (j, c) = (path(&dir, "r.json"), path(&dir, "r.csv"));
    let text = ok(&[
        "response",
        "networks/loader_engine_pumps.yaml",
        "--pump",
        "steering pump",
        "--points",
        "300",
        "--json",
        &j,
        "--csv",
        &c,
    ]);
    assert!(
        text.contains("speed range: 800–2400 rpm (the `speed_range` of shaft `engine`)"),
        "{text}"
    );
    let r = json(&j, "response");
    assert_eq!(r["speed_range"]["origin"], "shaft");
    let band = &r["bands"][0];
    assert!((num(&band["low_hz"]) - 160.0).abs() < 1e-9);
    assert!((num(&band["high_hz"]) - 480.0).abs() < 1e-9);
    for v in r["resonances"].as_array().unwrap() {
        let f = num(&v["resonance"]["freq_hz"]);
        // every resonance is in the report's table (the verdicts are ranked)
        assert!(text.contains(&format!(" {f:.2} ")), "{f} {text}");
    }
    let rows = csv_rows(&c);
    let freqs = r["freqs_hz"].as_array().unwrap();
    assert_eq!(freqs.len(), 300);
    let first = &r["points"][0];
    for (i, row) in rows.iter().take(300).enumerate() {
        assert_eq!(row[0], first["name"].as_str().unwrap());
        same(row[1].parse().unwrap(), num(&freqs[i]));
        same(
            row[2].parse().unwrap(),
            num(&first["values_pa_per_m3_s"][i]["amplitude"]),
        );
    }
    std::fs::remove_dir_all(dir).unwrap();
}

/// `response` ranks its verdicts: the crossings shown are those whose
/// ripple lies within `--floor` of the highest (levels L = 20·log10(p),
/// the definition of a level in dB), highest first, at most `--top`; the
/// near misses closest first; the JSON keeps every verdict.
#[test]
fn response_shows_the_highest_crossings_and_the_closest_near_misses() {
    let dir = scratch("response-ranked");
    let j = path(&dir, "r.json");
    let text = ok(&[
        "response",
        "networks/crane_pressure_line.yaml",
        "--speed-range",
        "600..3000",
        "--points",
        "2000",
        "--top",
        "4",
        "--floor",
        "12dB",
        "--json",
        &j,
    ]);
    let r = json(&j, "response");
    let resonances = r["resonances"].as_array().unwrap();
    let mut crossed: Vec<((usize, usize), f64)> = Vec::new();
    let mut near: Vec<((usize, usize), f64)> = Vec::new();
    for (ri, v) in resonances.iter().enumerate() {
        for (hi, h) in v["harmonics"].as_array().unwrap().iter().enumerate() {
            if h["coverage"]["kind"] == "crossed" {
                crossed.push(((ri, hi), 20.0 * num(&h["ripple_pa"]).log10()));
            } else {
                assert_eq!(h["coverage"]["kind"], "near");
                near.push(((ri, hi), num(&h["coverage"]["gap"])));
            }
        }
    }
    let highest = crossed.iter().map(|c| c.1).fold(f64::MIN, f64::max);
    let mut expected: Vec<((usize, usize), f64)> = crossed
        .iter()
        .copied()
        .filter(|c| highest - c.1 <= 12.0)
        .collect();
    expected.sort_by(|a, b| b.1.total_cmp(&a.1));
    expected.truncate(4);
    let refs = |key: &str| -> Vec<(usize, usize)> {
        r[key]
            .as_array()
            .unwrap()
            .iter()
            .map(|x| {
                (
                    x["resonance"].as_u64().unwrap() as usize,
                    x["harmonic"].as_u64().unwrap() as usize,
                )
            })
            .collect()
    };
    assert_eq!(
        refs("shown_crossings"),
        expected.iter().map(|x| x.0).collect::<Vec<_>>()
    );
    assert_eq!(expected.len(), 4, "{text}");
    near.sort_by(|a, b| a.1.total_cmp(&b.1));
    near.truncate(4);
    assert_eq!(
        refs("shown_near"),
        near.iter().map(|x| x.0).collect::<Vec<_>>()
    );
    assert!(
        text.contains(&format!(
            "crossings, highest ripple first (4 of {}: within 12 dB of the highest, at most --top 4):",
            crossed.len()
        )),
        "{text}"
    );
    assert_eq!(text.matches("CROSSED by harmonic").count(), 4, "{text}");
    std::fs::remove_dir_all(dir).unwrap();
}

/// `silencer --json`: per harmonic, IL = 20·log10|P_without/P_with| (its
/// definition, README "silencer") holds between the reported amplitudes,
/// the harmonic CSV carries the same numbers, and the caution is in the
/// result whenever a damper is reported.
#[test]
fn silencer_json_agrees_with_the_harmonic_csv_and_the_definition_of_il() {
    let dir = scratch("silencer-json");
    let (j, c) = (path(&dir, "s.json"), path(&dir, "h.csv"));
    ok(&[
        "silencer",
        "networks/drill_rig_feed_damper.yaml",
        "--element",
        "damper",
        "--tap",
        "head block",
        "--points",
        "50",
        "--json",
        &j,
        "--harmonic-csv",
        &c,
    ]);
    let r = json(&j, "silencer");
    let rows = csv_rows(&c);
    let harmonics = r["harmonics"].as_array().unwrap();
    assert_eq!(rows.len(), harmonics.len());
    for (h, row) in harmonics.iter().zip(&rows) {
        let (without, with) = (num(&h["without_pa"]), num(&h["with_pa"]));
        same(row[4].parse().unwrap(), without);
        same(row[5].parse().unwrap(), with);
        if with > 0.0 {
            let il = num(&h["insertion_loss_db"]);
            assert!((il - 20.0 * (without / with).log10()).abs() < 1e-9, "{h}");
        }
    }
    assert_eq!(r["freqs_hz"].as_array().unwrap().len(), 50);
    assert!(
        r["cautions"][0]
            .as_str()
            .unwrap()
            .contains("pressure vessel")
    );
    std::fs::remove_dir_all(dir).unwrap();
}

/// `tune --csv/--json/--plot` (the outputs every analysis has): the
/// `worst` objective is the largest overall rms over the speed range (its
/// definition, README "tune"), so at least the largest at the grid speeds;
/// the CSV holds the same per-speed values,
/// bounds print in one unit per parameter, and gas pressures are echoed
/// in bar gauge as the option gave them. `--speeds` stays an alias of
/// `--speed-points`.
#[test]
fn tune_writes_csv_json_and_plot_with_one_unit_per_parameter() {
    let dir = scratch("tune-out");
    let (c, j, svg) = (
        path(&dir, "t.csv"),
        path(&dir, "t.json"),
        path(&dir, "t.svg"),
    );
    let args = |points: &str| {
        vec![
            "tune".to_string(),
            "networks/drill_rig_feed_damper.yaml".into(),
            "--element".into(),
            "damper".into(),
            "--vary".into(),
            "neck_length=30mm..300mm".into(),
            "--vary".into(),
            "precharge=100 bar gauge..150 bar gauge".into(),
            "--tap".into(),
            "head block".into(),
            "--samples".into(),
            "12".into(),
            points.into(),
            "5".into(),
        ]
    };
    let mut a = args("--speed-points");
    a.extend(["--csv", &c, "--json", &j, "--plot", &svg].map(String::from));
    let a: Vec<&str> = a.iter().map(String::as_str).collect();
    let text = ok(&a);
    let b = args("--speeds");
    let b: Vec<&str> = b.iter().map(String::as_str).collect();
    assert_eq!(ok(&b), text);
    assert!(std::fs::read_to_string(&svg).unwrap().contains("<svg"));
    let r = json(&j, "tune");
    let tuned = &r["tuned"];
    let per: Vec<f64> = tuned["per_condition_pa"]
        .as_array()
        .unwrap()
        .iter()
        .map(num)
        .collect();
    assert_eq!(per.len(), 5);
    // the worst over the range is refined between the grid speeds, so it is
    // at least the largest grid value, and the result says where it is
    let grid_worst = per.iter().copied().fold(0.0, f64::max);
    let objective = num(&tuned["objective_pa"]);
    assert!(
        objective >= grid_worst * (1.0 - 1e-12),
        "{objective} {grid_worst}"
    );
    same(num(&r["worst"]["rms_pa"]), objective);
    let speed = num(&r["worst"]["speed_rev_s"]) * 60.0;
    assert!((800.0..=2400.0).contains(&speed), "{speed}");
    let rows = csv_rows(&c);
    assert_eq!(rows.len(), 5);
    for (row, p) in rows.iter().zip(&per) {
        assert_eq!(row[1], "");
        same(row[4].parse().unwrap(), *p);
    }
    // 800 rpm is the low end of the range, 2400 rpm the high end
    assert_eq!(rows[0][0].parse::<f64>().unwrap(), 800.0);
    assert!((rows[4][0].parse::<f64>().unwrap() - 2400.0).abs() < 1e-9);
    assert!(text.contains("  neck_length  mm  "), "{text}");
    assert!(text.contains("30.00  300.0"), "{text}");
    assert!(
        text.contains("  precharge    bar gauge        120.0"),
        "{text}"
    );
    assert!(
        text.contains("precharge: ") && text.contains(" bar gauge"),
        "{text}"
    );
    assert!(!text.contains("bar abs\n"), "{text}");
    std::fs::remove_dir_all(dir).unwrap();
}

/// `sweep --json`: the overall rms at each grid speed is √(Σ|P_k|²/2) of
/// the CSV's amplitudes at that speed (methods.md §7.4; both pumps of the
/// engine example are on the swept shaft, so nothing else adds), the
/// worst speed per point is at least the grid maximum, and the crossings
/// are those of the text. `--point`, `--step` and `--shaft` stay aliases.
#[test]
fn sweep_json_agrees_with_the_grid_csv() {
    let dir = scratch("sweep-json");
    let (j, c) = (path(&dir, "s.json"), path(&dir, "s.csv"));
    let example = "networks/loader_engine_pumps.yaml";
    let text = ok(&[
        "sweep",
        example,
        "--speed-step",
        "80",
        "--harmonics",
        "3",
        "--json",
        &j,
        "--csv",
        &c,
    ]);
    let old = ok(&[
        "sweep",
        example,
        "--step",
        "80",
        "--harmonics",
        "3",
        "--shaft",
        "engine",
    ]);
    assert_eq!(old, text);
    let r = json(&j, "sweep");
    let rows = csv_rows(&c);
    let speeds = r["speeds_rev_s"].as_array().unwrap();
    let points = r["points"].as_array().unwrap();
    assert_eq!(speeds.len(), 21);
    for (pi, point) in points.iter().enumerate() {
        let levels = r["overall_rms_pa"][pi].as_array().unwrap();
        for (si, s) in speeds.iter().enumerate() {
            let rpm = num(s) * 60.0;
            let ms: f64 = rows
                .iter()
                .filter(|row| {
                    row[1] == point.as_str().unwrap()
                        && (row[0].parse::<f64>().unwrap() - rpm).abs() < 1e-6
                })
                .map(|row| row[4].parse::<f64>().unwrap().powi(2) / 2.0)
                .sum();
            let rms = num(&levels[si]);
            assert!(
                (rms - ms.sqrt()).abs() <= 1e-9 * rms.max(1.0),
                "{rms} {}",
                ms.sqrt()
            );
        }
        let grid_max = levels.iter().map(num).fold(0.0, f64::max);
        let worst = num(&r["worst"][pi]["rms_pa"]);
        assert!(worst >= grid_max * (1.0 - 1e-12), "{worst} {grid_max}");
    }
    let crossings = r["crossings"].as_array().unwrap();
    // the report shows the crossings within 20 dB of their point's worst
    // overall rms level (a harmonic's level is that of its rms |P|/√2;
    // L = 20·log10(p/p_ref)), highest first, at most 10
    let worst_db = |point: &serde_json::Value| {
        let i = r["points"]
            .as_array()
            .unwrap()
            .iter()
            .position(|p| p == point)
            .unwrap();
        20.0 * num(&r["worst"][i]["rms_pa"]).log10()
    };
    let mut expected: Vec<(usize, f64)> = crossings
        .iter()
        .enumerate()
        .map(|(i, c)| (i, 20.0 * (num(&c["amplitude_pa"]) / 2f64.sqrt()).log10()))
        .filter(|(i, l)| worst_db(&crossings[*i]["point"]) - l <= 20.0)
        .collect();
    expected.sort_by(|a, b| b.1.total_cmp(&a.1));
    let expected: Vec<usize> = expected.iter().take(10).map(|x| x.0).collect();
    let shown: Vec<usize> = r["shown_crossings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|i| i.as_u64().unwrap() as usize)
        .collect();
    assert_eq!(shown, expected);
    assert!(!shown.is_empty());
    assert!(
        text.contains(&format!(
            "resonance crossings, highest first ({} of {}:",
            shown.len(),
            crossings.len()
        )),
        "{text}"
    );
    assert_eq!(r["order_basis"], "shaft_fundamental");
    assert!(text.contains("  speed rpm  order  frequency Hz"), "{text}");
    std::fs::remove_dir_all(dir).unwrap();
}

/// `fit --json` on the demo bench: the JSON holds the CSV's estimates, and
/// the text gives each value with its ± in the same unit, the uncertainty
/// to two significant digits and the value rounded at the same place
/// (JCGM 100:2008 §7.2.6): both round back to the JSON's numbers.
#[test]
fn fit_prints_values_and_uncertainties_in_one_unit() {
    let dir = scratch("fit-json");
    let (j, c) = (path(&dir, "f.json"), path(&dir, "f.csv"));
    let text = ok(&[
        "fit",
        "networks/bench/demo_bench.yaml",
        "--draws",
        "50",
        "--json",
        &j,
        "--csv",
        &c,
    ]);
    let r = json(&j, "fit");
    let rows = csv_rows(&c);
    let harmonics = r["harmonics"].as_array().unwrap();
    assert_eq!(rows.len(), harmonics.len());
    for (h, row) in harmonics.iter().zip(&rows) {
        same(
            row[2].parse().unwrap(),
            num(&h["flow_m3_s"]["value"]["amplitude"]),
        );
        same(
            row[6].parse().unwrap(),
            num(&h["flow_m3_s"]["amplitude_uncertainty"]),
        );
    }
    // the Qs column is in L/min: "value ± u" for harmonic 1
    assert!(text.contains(" Qs L/min "), "{text}");
    let line = text
        .lines()
        .find(|l| l.trim_start().starts_with("1  "))
        .unwrap();
    let cells: Vec<&str> = line.split_whitespace().collect();
    let (v, u): (f64, f64) = (cells[2].parse().unwrap(), cells[4].parse().unwrap());
    assert_eq!(cells[3], "±");
    let h1 = &harmonics[0]["flow_m3_s"];
    let lpm = 60_000.0;
    let (v_json, u_json) = (
        num(&h1["value"]["amplitude"]) * lpm,
        num(&h1["amplitude_uncertainty"]) * lpm,
    );
    // two significant digits of u; the value's last digit is u's last digit
    let step = 10f64.powi(u_json.log10().floor() as i32 - 1);
    assert!(
        (u - u_json).abs() <= 0.5 * step * (1.0 + 1e-9),
        "{u} {u_json}"
    );
    assert!(
        (v - v_json).abs() <= 0.5 * step * (1.0 + 1e-9),
        "{v} {v_json}"
    );
    let decimals = |s: &str| s.split_once('.').map_or(0, |(_, d)| d.len());
    assert_eq!(decimals(cells[2]), decimals(cells[4]), "{line}");
    // the overall line: "anechoic X ± Y bar" in one unit
    assert!(
        text.lines()
            .any(|l| l.starts_with("overall rms: anechoic ") && l.matches(" bar").count() == 2),
        "{text}"
    );
    std::fs::remove_dir_all(dir).unwrap();
}

/// `fit --self-check`: the JSON holds the keys docs/json.md lists and the
/// CSV's statistics; `--include-flagged` moves the flagged harmonics into
/// the overall levels (the demo bench as first designed has flagged
/// harmonics, so the levels rise).
#[test]
fn fit_self_check_writes_documented_json_and_csv() {
    let dir = scratch("fit-check");
    let (j, c) = (path(&dir, "s.json"), path(&dir, "s.csv"));
    let bench = "networks/bench/demo_bench.yaml";
    let text = ok(&[
        "fit",
        bench,
        "--self-check",
        "3",
        "--draws",
        "5",
        "--json",
        &j,
        "--csv",
        &c,
    ]);
    assert!(text.contains("3 seeds of synthetic data"), "{text}");
    let r = json(&j, "fit --self-check");
    let doc = std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("docs/json.md"))
        .unwrap();
    let keys: std::collections::BTreeSet<String> = r.as_object().unwrap().keys().cloned().collect();
    assert_eq!(documented_keys(&doc, "fit --self-check"), keys);
    let rows = csv_rows(&c);
    let harmonics = r["harmonics"].as_array().unwrap();
    assert_eq!(rows.len(), 4 * harmonics.len());
    for (q, row) in harmonics
        .iter()
        .flat_map(|h| h["quantities"].as_array().unwrap())
        .zip(&rows)
    {
        same(row[5].parse().unwrap(), num(&q["bias"]));
        same(row[7].parse().unwrap(), num(&q["spread_over_sigma"]));
    }
    // A bench with flagged harmonics: the demo as first designed (a 10 mm
    // line and its first two systems), synthesised into the scratch folder.
    let flagged = path(&dir, "flagged.yaml");
    let demo = std::fs::read_to_string(bench).unwrap();
    let (cut, end) = (
        demo.find("  - name: long line, open valve").unwrap(),
        demo.find("synthesis:").unwrap(),
    );
    let old = format!("{}{}", &demo[..cut], &demo[end..]).replace("bore: 25 mm", "bore: 10 mm");
    std::fs::write(&flagged, old).unwrap();
    ok(&["synth", &flagged]);
    let rms = |extra: &[&str]| {
        let f = path(&dir, "f.json");
        let mut args = vec!["fit", &flagged, "--draws", "0", "--json", &f];
        args.extend(extra);
        ok(&args);
        let r = json(&f, "fit");
        (
            num(&r["anechoic_rms_pa"]["value"]),
            r["rms_orders"].as_array().unwrap().len(),
            r["harmonics"].as_array().unwrap().len(),
        )
    };
    let (without, n_without, n) = rms(&[]);
    let (with, n_with, _) = rms(&["--include-flagged"]);
    assert!(n_without < n && n_with == n, "{n_without} {n_with} {n}");
    assert!(with > without, "{with} {without}");
    std::fs::remove_dir_all(dir).unwrap();
}

/// The long options `ripline CMD --help` lists (global ones, those of
/// `ripline --help`, apart).
fn help_options(args: &[&str]) -> std::collections::BTreeSet<String> {
    let out = ok(args);
    out.lines()
        .filter_map(|l| {
            let t = l.trim_start();
            if !t.starts_with('-') {
                return None;
            }
            let i = t.find("--")?;
            let name: String = t[i..]
                .chars()
                .take_while(|c| *c == '-' || c.is_ascii_alphanumeric())
                .collect();
            (name != "--help" && name != "--version").then_some(name)
        })
        .collect()
}

/// The options of the first option table (`| option | meaning |`) in the
/// README section whose heading names `ripline CMD`.
fn readme_options(readme: &str, cmd: &str) -> std::collections::BTreeSet<String> {
    let lines: Vec<&str> = readme.lines().collect();
    let start = lines
        .iter()
        .position(|l| l.starts_with('#') && l.contains(&format!("`ripline {cmd}")))
        .unwrap_or_else(|| panic!("README has no section for `ripline {cmd}`"));
    let level = lines[start].chars().take_while(|c| *c == '#').count();
    let end = lines[start + 1..]
        .iter()
        .position(|l| l.starts_with('#') && l.chars().take_while(|c| *c == '#').count() <= level)
        .map_or(lines.len(), |i| start + 1 + i);
    let section = &lines[start..end];
    let table = section
        .iter()
        .position(|l| l.starts_with("| option |"))
        .unwrap_or_else(|| panic!("the README's `ripline {cmd}` section has no option table"));
    section[table + 2..]
        .iter()
        .take_while(|l| l.starts_with('|'))
        .flat_map(|l| {
            let cell = l.split(" | ").next().unwrap_or("");
            cell.split('`')
                .skip(1)
                .step_by(2)
                .filter_map(|code| code.split_whitespace().next())
                .filter(|w| w.starts_with("--"))
                .map(str::to_string)
                .collect::<Vec<_>>()
        })
        .collect()
}

/// The README's option table of every command lists exactly the options
/// its `--help` shows (the help is generated from the argument types, so
/// this keeps the user documentation true), and the global options appear
/// in the README.
#[test]
fn the_readme_option_tables_match_the_help() {
    let readme =
        std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("README.md")).unwrap();
    let top = ok(&["--help"]);
    let commands: Vec<String> = top
        .lines()
        .skip_while(|l| !l.starts_with("Commands:"))
        .skip(1)
        .take_while(|l| l.starts_with("  "))
        .filter_map(|l| l.split_whitespace().next().map(str::to_string))
        .filter(|c| c != "help")
        .collect();
    assert!(commands.len() >= 9, "{commands:?}");
    let global = help_options(&["--help"]);
    for g in &global {
        assert!(
            readme.contains(&format!("`{g}")),
            "README lacks the global {g}"
        );
    }
    for cmd in &commands {
        let help: std::collections::BTreeSet<String> = help_options(&[cmd, "--help"])
            .difference(&global)
            .cloned()
            .collect();
        assert_eq!(readme_options(&readme, cmd), help, "ripline {cmd}");
    }
}

/// The top-level keys docs/json.md lists for a command's `result` (the
/// first column of its table; `a`, `b` cells list several).
fn documented_keys(doc: &str, cmd: &str) -> std::collections::BTreeSet<String> {
    let heading = format!("## `{cmd}`");
    let start = doc
        .find(&heading)
        .unwrap_or_else(|| panic!("docs/json.md has no section `{cmd}`"));
    let section = &doc[start + heading.len()..];
    let section = &section[..section.find("\n## ").unwrap_or(section.len())];
    section
        .lines()
        .filter(|l| l.starts_with("| `"))
        .flat_map(|l| {
            let cell = l.split(" | ").next().unwrap_or("");
            cell.split('`')
                .skip(1)
                .step_by(2)
                .filter(|k| !k.contains('['))
                .map(str::to_string)
                .collect::<Vec<_>>()
        })
        .collect()
}

/// docs/json.md documents exactly the keys each command's JSON result has,
/// and the envelope's.
#[test]
fn the_json_schema_document_lists_every_key() {
    let doc = std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("docs/json.md"))
        .unwrap();
    let dir = scratch("json-doc");
    let damper = "networks/drill_rig_feed_damper.yaml";
    let runs: [(&str, Vec<&str>); 12] = [
        ("solve", vec![]),
        ("check", vec![]),
        ("profile", vec![]),
        ("response", vec![damper, "--points", "30"]),
        (
            "silencer",
            vec![
                damper,
                "--element",
                "damper",
                "--tap",
                "head block",
                "--points",
                "30",
            ],
        ),
        (
            "tune",
            vec![
                damper,
                "--element",
                "damper",
                "--vary",
                "gas_volume=0.1L..1L",
                "--tap",
                "head block",
                "--samples",
                "4",
                "--speed-points",
                "3",
            ],
        ),
        (
            "sweep",
            vec!["networks/loader_engine_pumps.yaml", "--speed-step", "400"],
        ),
        (
            "fit",
            vec!["networks/bench/demo_bench.yaml", "--draws", "5"],
        ),
        (
            "plan-bench",
            vec![
                "networks/bench/demo_bench.yaml",
                "--draws",
                "5",
                "--points",
                "2",
            ],
        ),
        (
            "assess",
            vec!["networks/drill_rig_feed.yaml", "--speeds", "21"],
        ),
        (
            "compare",
            vec![
                "networks/calibration/log_loader.yaml",
                "networks/calibration/commissioning.yaml",
            ],
        ),
        (
            "calibrate",
            vec![
                "networks/calibration/log_loader.yaml",
                "networks/calibration/commissioning.yaml",
                "--vary",
                "fluid.bulk_modulus=1GPa..2GPa",
                "--max-evaluations",
                "3",
            ],
        ),
    ];
    for (cmd, args) in runs {
        let file = path(&dir, &format!("{cmd}.json"));
        let mut all = vec![cmd];
        all.extend(args);
        all.extend(["--json", &file]);
        ok(&all);
        let v: Value = serde_json::from_str(&std::fs::read_to_string(&file).unwrap()).unwrap();
        let envelope: std::collections::BTreeSet<String> =
            v.as_object().unwrap().keys().cloned().collect();
        let listed = documented_keys(&doc.replace("## The envelope", "## `envelope`"), "envelope");
        assert_eq!(listed, envelope, "envelope");
        let keys: std::collections::BTreeSet<String> =
            v["result"].as_object().unwrap().keys().cloned().collect();
        assert_eq!(documented_keys(&doc, cmd), keys, "{cmd}");
    }
    std::fs::remove_dir_all(dir).unwrap();
}

/// Every picture of the README's gallery is committed, is a PNG, and is
/// named by the `--plot`/`--waveform` of a command shown in the gallery
/// (the sweep's levels chart is the `-levels` companion of its map).
#[test]
fn the_gallery_pictures_exist_and_their_commands_are_shown() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let readme = std::fs::read_to_string(root.join("README.md")).unwrap();
    let gallery = &readme[readme.find("## Gallery").unwrap()..];
    let gallery = &gallery[..gallery[3..].find("\n## ").unwrap()];
    let pictures: Vec<&str> = gallery
        .split("](")
        .skip(1)
        .filter_map(|s| s.split(')').next())
        .filter(|s| s.ends_with(".png"))
        .collect();
    assert!(pictures.len() >= 8, "{pictures:?}");
    for p in pictures {
        let bytes = std::fs::read(root.join(p)).unwrap_or_else(|_| panic!("{p} is missing"));
        assert!(bytes.starts_with(b"\x89PNG"), "{p}");
        let shown = p.replace("-levels", "");
        assert!(
            gallery.contains(&format!(" {shown}")),
            "no command writes {p}"
        );
    }
}
