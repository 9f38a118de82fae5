//! Uncertainty bands against analytic cases.
//!
//! A pump that is an ideal flow source (no source volume) feeds a lossless
//! hose of length L = 1 m ending at a tank: seen from the pump the line is
//! closed at one end and open at the other, so its resonances sit at
//! f = (2m − 1)·c/4L (the quarter-wave line; Kinsler et al.,
//! *Fundamentals of Acoustics*, the closed–open pipe). Its first resonance
//! is c/4L, a linear function of the hose's wave speed c, so a tolerance on
//! c maps onto the resonance exactly: the band of f is the image of the
//! band of c.

use ripline::envelope::OperatingPoint;
use ripline::io::CircuitTemplate;
use ripline::io::quantity::Spread;
use ripline::uncertainty::bands::{BandRequest, Method, propagate, response_outputs};
use ripline::uncertainty::linear::coverage_factor;
use ripline::uncertainty::monte_carlo::Options;
use std::path::{Path, PathBuf};

/// A 9-element pump at node `a` with one harmonic and no source
/// compliance (an ideal flow source, a closed end to the lines there).
const PUMP_AT_A: &str = "\
pump:
  node: a
  speed: 1500 rpm
  pumping_elements: 9
  flow_ripple: [{harmonic: 1, amplitude: 1 L/min}]
  source_impedance: {volume: 0 L}
";

fn quarter_wave(wave_speed: &str, model: &str) -> String {
    format!(
        "\
title: quarter-wave test line (invented)
fluid: {{density: 870 kg/m3, bulk_modulus: 1.6 GPa, viscosity: 32 cSt}}
line_model: {model}
{PUMP_AT_A}elements:
  - {{name: line, kind: hose, from: a, to: b, length: 1 m, bore: 25 mm, wave_speed: \"{wave_speed}\", loss_factor: 0}}
  - {{name: tank, kind: tank, at: b}}
taps:
  - {{name: pump outlet, node: a}}
"
    )
}

/// A scratch folder for one test (`tag`), made if missing.
fn scratch_dir(tag: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("ripline-bands-{tag}-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

/// Runs `ripline ARGS --json JSON` from the crate's folder, asserts that it
/// succeeds, and returns its standard output and the JSON.
fn ripline_json(args: &[&str], json: &Path) -> (String, serde_json::Value) {
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_ripline"))
        .args(args)
        .args(["--json", json.to_str().unwrap()])
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let v = serde_json::from_str(&std::fs::read_to_string(json).unwrap()).unwrap();
    (String::from_utf8(o.stdout).unwrap(), v)
}

/// A fresh scratch folder for one test (`tag`) holding the circuit `text`
/// as `name`: the folder and the circuit's path.
fn circuit_in_scratch(tag: &str, name: &str, text: &str) -> (PathBuf, PathBuf) {
    let dir = scratch_dir(tag);
    let circuit = dir.join(name);
    std::fs::write(&circuit, text).unwrap();
    (dir, circuit)
}

/// Frequencies from `lo` to `hi` Hz in 0.25 % steps.
fn grid(lo: f64, hi: f64) -> Vec<f64> {
    let n = ((hi / lo).ln() / 1.0025f64.ln()).ceil() as i32;
    (0..=n).map(|i| lo * 1.0025f64.powi(i)).collect()
}

/// Bands of the first resonance's frequency and level only (the response
/// on a grid around it finds it in each draw).
fn bands_of_resonance(
    text: &str,
    method: Method,
    options: Options,
) -> ripline::uncertainty::bands::Propagated {
    bands_of(text, method, options, &grid(250.0, 350.0), true)
}

fn bands_of(
    text: &str,
    method: Method,
    options: Options,
    freqs: &[f64],
    resonance_only: bool,
) -> ripline::uncertainty::bands::Propagated {
    let template = CircuitTemplate::new(text, "quarter.yaml").unwrap();
    let request = BandRequest {
        method,
        monte_carlo: options,
    };
    let evaluate = |c: ripline::Circuit| {
        let out = response_outputs(c, 0, freqs, &[300.0])?;
        Ok(if resonance_only {
            out[out.len() - 2..].to_vec()
        } else {
            out
        })
    };
    propagate(
        &template,
        &OperatingPoint::default(),
        &|_| {},
        &evaluate,
        None,
        &request,
        &mut |_, _| {},
    )
    .unwrap()
}

// c = 1200 m/s ± 5 %, rectangular: f = c/4L lies uniformly in 285 .. 315 Hz
// and its 90 % probabilistically symmetric interval is 300·(1 ∓ 0.045) =
// 286.5 .. 313.5 Hz. The Monte Carlo ends must match within their sampling
// error (the quantile of a uniform density 1/30 Hz⁻¹ from M draws has a
// standard deviation 30·√(0.05·0.95/M) Hz); 90 % of the draws lie inside by
// construction, and the interval is the analytic one, so the band covers
// the stated fraction of the analytic distribution.
#[test]
fn the_resonance_band_is_the_image_of_the_wave_speed_tolerance() {
    let r = bands_of_resonance(
        &quarter_wave("1200 m/s ± 5 %", "lossless"),
        Method::MonteCarlo,
        Options::default(),
    );
    assert_eq!(r.info.inputs.len(), 1);
    assert_eq!(r.info.inputs[0].spread, Spread::Limits);
    let f = r.outputs[0];
    assert!((f.nominal - 300.0).abs() < 1e-6, "{f:?}");
    let mc = f.monte_carlo.unwrap();
    let sd = 30.0 * (0.05f64 * 0.95 / r.info.draws as f64).sqrt();
    assert!((mc.low - 286.5).abs() < 4.0 * sd, "{mc:?} (sd {sd})");
    assert!((mc.high - 313.5).abs() < 4.0 * sd, "{mc:?} (sd {sd})");
    // u of a rectangular distribution of half-width 15 Hz: 15/√3
    assert!(
        (mc.u - 15.0 / 3f64.sqrt()).abs() < 0.05 * 15.0 / 3f64.sqrt(),
        "{mc:?}"
    );
    assert_eq!(mc.missing, 0);
    assert_eq!(r.info.stable, Some(true));
    // First order: f is linear in c, so u_c = u(c)/4L exactly and η = 0 …
    let lin = f.linear.unwrap();
    let u = 60.0 / 3f64.sqrt() / 4.0;
    assert!((lin.u - u).abs() < 1e-6 * u, "{lin:?}");
    assert!(lin.nonlinearity < 1e-6 && lin.good);
    // … but y ± k·u_c assumes a normal output: 300 ± 1.645·8.66 =
    // 285.75 .. 314.25 Hz, 0.75 Hz outside the true ends, more than the
    // Monte Carlo tolerance (u = 8.7 Hz to one digit: δ = 0.5 Hz), so JCGM
    // 101 §8's check says the linearised interval is not valid here.
    assert!((lin.high - (300.0 + coverage_factor(0.9) * u)).abs() < 1e-6);
    assert_eq!(f.linear_agrees, Some(false));
}

// With a standard uncertainty (normal) on c, f = c/4L is normal too and
// the first-order interval is exact: it must agree with Monte Carlo
// (JCGM 101 §8).
#[test]
fn linearised_bands_agree_with_monte_carlo_where_the_output_is_linear() {
    let r = bands_of_resonance(
        &quarter_wave("1200 m/s, u = 2 %", "lossless"),
        Method::MonteCarlo,
        Options::default(),
    );
    let f = r.outputs[0];
    let lin = f.linear.unwrap();
    assert!((lin.u - 6.0).abs() < 1e-6, "{lin:?}"); // 24 m/s / 4 m
    assert_eq!(f.linear_agrees, Some(true), "{f:?}");
    // the first-order method alone gives the same band without draws
    let l = bands_of_resonance(
        &quarter_wave("1200 m/s, u = 2 %", "lossless"),
        Method::Linear,
        Options::default(),
    );
    assert_eq!(l.info.draws, 0);
    let fl = l.outputs[0];
    assert!(fl.monte_carlo.is_none() && fl.linear_agrees.is_none());
    assert!((fl.linear.unwrap().u - 6.0).abs() < 1e-6);
}

// The response at a fixed frequency next to the resonance is far from
// linear in c (a ±5 % change of c sweeps the peak across it): the check
// must say the linearised band is not good there, while far below the
// resonance (100 Hz, a third of it, where the closed–open line's response
// goes as tan(πf/2f₀) and bends little) it is nearly linear in c.
#[test]
fn the_linearity_check_flags_a_response_next_to_its_resonance() {
    let freqs = grid(100.0, 350.0);
    let r = bands_of(
        &quarter_wave("1200 m/s ± 5 %", "laminar"),
        Method::Linear,
        Options::default(),
        &freqs,
        false,
    );
    let near = freqs.iter().position(|&f| f >= 300.0).unwrap();
    let at_near = r.outputs[near].linear.unwrap();
    let at_low = r.outputs[0].linear.unwrap();
    assert!(!at_near.good && at_near.nonlinearity > 0.5, "{at_near:?}");
    assert!(at_low.good, "{at_low:?}");
}

/// `ripline solve --bands` on the log loader of the calibration demo with
/// one uncertain input: harmonic 1 of the source flow ripple, 1.3 L/min ±
/// 10 % (limits, a rectangular distribution). The ripple is linear in the
/// source flow, so |P₁| at every point is its nominal value times
/// (1 + 0.1·U), U uniform on [−1, 1]: the 90 % Monte Carlo interval is the
/// 5th..95th percentile of U, nominal × [0.91, 1.09]; the first-order band
/// is nominal × (1 ± k·0.1/√3) with k = Φ⁻¹(0.95) = 1.6449 (scipy
/// `norm.ppf(0.95)`), nominal × [0.90503, 1.09497]. The other harmonics do
/// not move.
#[test]
fn solve_bands_of_a_linear_input_are_the_image_of_its_limits() {
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
    let model = std::fs::read_to_string(root.join("networks/calibration/log_loader.yaml")).unwrap();
    let text = model
        .replace(
            "{harmonic: 1, amplitude: 1.3 L/min, phase: 0 deg}",
            "{harmonic: 1, amplitude: 1.3 L/min ± 10 %, phase: 0 deg}",
        )
        .replace("1.6 GPa ± 10 %", "1.6 GPa");
    assert_ne!(text, model);
    let (dir, circuit) = circuit_in_scratch("cli", "linear.yaml", &text);
    let run = |method: &str, csv: &str| {
        let csv = dir.join(csv);
        let o = std::process::Command::new(env!("CARGO_BIN_EXE_ripline"))
            .args(["solve", circuit.to_str().unwrap(), "--bands", method])
            .args(["--seed", "7", "--csv", csv.to_str().unwrap()])
            .output()
            .unwrap();
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        let table = std::fs::read_to_string(csv).unwrap();
        let mut lines = table.lines();
        assert_eq!(
            lines.next().unwrap(),
            "point,harmonic,frequency_hz,amplitude_pa,phase_deg,amplitude_low_pa,amplitude_high_pa"
        );
        lines
            .map(|l| {
                let c: Vec<&str> = l.split(',').collect();
                let num = |i: usize| c[i].parse::<f64>().unwrap();
                (c[1].parse::<u32>().unwrap(), num(3), num(5), num(6))
            })
            .collect::<Vec<_>>()
    };
    for (method, low, high, tol) in [
        ("monte-carlo", 0.91, 1.09, 0.004),
        ("first-order", 0.905_03, 1.094_97, 1e-4),
    ] {
        let rows = run(method, &format!("{method}.csv"));
        assert_eq!(rows.len(), 18);
        for (harmonic, nominal, lo, hi) in rows {
            if harmonic == 1 {
                assert!(
                    (lo / nominal - low).abs() < tol,
                    "{method}: {lo} / {nominal}"
                );
                assert!(
                    (hi / nominal - high).abs() < tol,
                    "{method}: {hi} / {nominal}"
                );
            } else {
                // stored as 32-bit floats in the Monte Carlo
                assert!((lo / nominal - 1.0).abs() < 1e-6 && (hi / nominal - 1.0).abs() < 1e-6);
            }
        }
    }
    // a seed gives the same bands
    assert_eq!(
        run("monte-carlo", "again.csv"),
        run("monte-carlo", "again2.csv")
    );
    let _ = std::fs::remove_dir_all(dir);
}

#[test]
fn bands_of_a_circuit_with_nothing_uncertain_are_refused() {
    for args in [
        vec!["solve", "--bands", "monte-carlo"],
        vec![
            "solve",
            "networks/calibration/log_loader.yaml",
            "--bands",
            "monte-carlo",
            "--draws",
            "5",
        ],
        vec!["solve", "--coverage", "95"],
    ] {
        let o = std::process::Command::new(env!("CARGO_BIN_EXE_ripline"))
            .args(&args)
            .current_dir(env!("CARGO_MANIFEST_DIR"))
            .output()
            .unwrap();
        assert_eq!(o.status.code(), Some(2), "{args:?}");
        assert!(o.stdout.is_empty(), "{args:?}");
    }
}

/// `ripline response --bands` on the quarter-wave line with c = 1200 m/s ±
/// 5 % (limits): the resonances (2m − 1)·c/4L lie uniformly within ±5 % of
/// 300 and 900 Hz, so their 90 % intervals are 300·(1 ∓ 0.045) = 286.5 ..
/// 313.5 Hz and 859.5 .. 940.5 Hz (the closed–open pipe, as above); the
/// first-order bands are f ± k·f·0.05/√3, k = 1.6449 (scipy
/// `norm.ppf(0.95)`): 285.75 .. 314.25 Hz and 857.26 .. 942.73 Hz.
#[test]
fn response_bands_of_the_quarter_wave_line_are_the_image_of_the_wave_speed() {
    let (dir, circuit) = circuit_in_scratch(
        "resp",
        "quarter.yaml",
        &quarter_wave("1200 m/s ± 5 %", "lossless"),
    );
    let run = |method: &str| {
        let json = dir.join(format!("{method}.json"));
        let (text, v) = ripline_json(
            &[
                "response",
                circuit.to_str().unwrap(),
                "--band",
                "100..1000",
                "--bands",
                method,
            ],
            &json,
        );
        assert!(
            text.contains("uncertainty bands: 90.0 % coverage"),
            "{text}"
        );
        v["result"]["uncertainty_bands"]["resonances"]
            .as_array()
            .unwrap()
            .iter()
            .map(|r| {
                let f = &r["freq_hz"];
                let band = if f["monte_carlo"].is_null() {
                    &f["linear"]
                } else {
                    &f["monte_carlo"]
                };
                (
                    r["nominal_hz"].as_f64().unwrap(),
                    band["low"].as_f64().unwrap(),
                    band["high"].as_f64().unwrap(),
                )
            })
            .collect::<Vec<_>>()
    };
    let mc = run("monte-carlo");
    let lin = run("first-order");
    assert_eq!(mc.len(), 2);
    assert_eq!(lin.len(), 2);
    for ((f0, lo, hi), (_, llo, lhi)) in mc.into_iter().zip(lin) {
        assert!((f0 / 300.0 - 1.0).abs() < 1e-6 || (f0 / 900.0 - 1.0).abs() < 1e-6);
        // 4 sampling standard deviations of the quantile of a uniform
        // density over ±5 % with the adaptive procedure's ≥ 1000 draws
        let sd = 0.1 * f0 * (0.05f64 * 0.95 / 1000.0).sqrt();
        assert!((lo - 0.955 * f0).abs() < 4.0 * sd, "{lo} of {f0}");
        assert!((hi - 1.045 * f0).abs() < 4.0 * sd, "{hi} of {f0}");
        let k_u = 1.644_853_626_951_472_2 * f0 * 0.05 / 3f64.sqrt();
        assert!((llo - (f0 - k_u)).abs() < 1e-6 * f0, "{llo} of {f0}");
        assert!((lhi - (f0 + k_u)).abs() < 1e-6 * f0, "{lhi} of {f0}");
    }
    let _ = std::fs::remove_dir_all(dir);
}

/// Two quarter-wave tubes (1 m and 1.05 m, steel, lossless), one at the
/// pump and one behind a 2 mm link, give two resonances 5.7 % apart (about
/// 312 and 330 Hz). The oil's density is uncertain (± 10 %, rectangular):
/// every tube's wave speed is √(K_eff/ρ) with a wall term free of ρ, and its
/// characteristic impedance ρc/A carries the same factor for every tube, so
/// the resonance condition depends on ωL/c alone and every resonance moves
/// as ρ^(−1/2) (dimensional analysis). The 90 % interval of each is then
/// f0/√1.09 .. f0/√0.91, although a draw shifts each resonance by more than
/// half the gap between them: a pairing with the nearest nominal resonance
/// gives the wrong one (the code before: 304.7 .. 327.1 Hz and 315.7 ..
/// 337.0 Hz). The ends match within 4 sampling standard deviations of the
/// quantile of a uniform density (1,000 draws).
#[test]
fn response_bands_follow_each_resonance_past_its_neighbour() {
    let text = format!(
        "\
title: two weakly coupled quarter-wave tubes (invented)
fluid: {{density: \"870 kg/m3 ± 10 %\", bulk_modulus: 1.6 GPa, viscosity: 32 cSt}}
line_model: lossless
{PUMP_AT_A}elements:
  - {{name: first, kind: tube, from: a, to: t1, length: 1 m, bore: 20 mm, wall: 2 mm, material: steel}}
  - {{name: link, kind: tube, from: a, to: b, length: 0.3 m, bore: 2 mm, wall: 1 mm, material: steel}}
  - {{name: second, kind: tube, from: b, to: t2, length: 1.05 m, bore: 20 mm, wall: 2 mm, material: steel}}
  - {{name: tank1, kind: tank, at: t1}}
  - {{name: tank2, kind: tank, at: t2}}
taps:
  - {{name: pump outlet, node: a}}
  - {{name: far branch, node: b}}
"
    );
    let (dir, circuit) = circuit_in_scratch("pair", "pair.yaml", &text);
    let json = dir.join("r.json");
    let (_, v) = ripline_json(
        &[
            "response",
            circuit.to_str().unwrap(),
            "--band",
            "250..400",
            "--bands",
            "monte-carlo",
            "--draws",
            "1000",
        ],
        &json,
    );
    let r = v["result"]["uncertainty_bands"]["resonances"]
        .as_array()
        .unwrap();
    assert_eq!(r.len(), 2);
    let f0: Vec<f64> = r
        .iter()
        .map(|x| x["nominal_hz"].as_f64().unwrap())
        .collect();
    assert!(
        (f0[1] / f0[0] - 1.0) > 0.05 && (f0[1] / f0[0] - 1.0) < 0.065,
        "{f0:?}"
    );
    for (x, f0) in r.iter().zip(f0) {
        let b = &x["freq_hz"]["monte_carlo"];
        let (lo, hi) = (b["low"].as_f64().unwrap(), b["high"].as_f64().unwrap());
        assert_eq!(b["missing"].as_u64(), Some(0));
        // the density's 5 % quantile 0.91ρ0 gives the high end; ±4 sd of a
        // uniform quantile (width 0.2ρ0) moves f by about half as much
        let slack = 4.0 * 0.5 * 0.2 * (0.05f64 * 0.95 / 1000.0).sqrt() * f0;
        assert!((lo - f0 / 1.09f64.sqrt()).abs() < slack, "{lo} of {f0}");
        assert!((hi - f0 / 0.91f64.sqrt()).abs() < slack, "{hi} of {f0}");
    }
    let _ = std::fs::remove_dir_all(dir);
}

/// `ripline response --bands` on the log loader's feed line (an invented
/// circuit whose bulk modulus is uncertain by ± 10 %): its resonance at
/// 1396 Hz falls below the prominence threshold in about half the draws.
/// Those draws are counted and said, and its band stays its own (the code
/// before gave it 1068 Hz's frequency in them, a band reaching down to
/// 1070 Hz, below the geometric mean of the two, 1221 Hz).
#[test]
fn response_bands_count_the_draws_that_lack_a_resonance() {
    let dir = scratch_dir("missing");
    let json = dir.join("r.json");
    let (text, v) = ripline_json(
        &[
            "response",
            "networks/calibration/log_loader.yaml",
            "--bands",
            "monte-carlo",
            "--draws",
            "200",
        ],
        &json,
    );
    let r = v["result"]["uncertainty_bands"]["resonances"]
        .as_array()
        .unwrap();
    let f0: Vec<f64> = r
        .iter()
        .map(|x| x["nominal_hz"].as_f64().unwrap())
        .collect();
    let last = f0.len() - 1;
    assert!(
        (f0[last] - 1396.0).abs() < 1.0 && (f0[last - 1] - 1068.0).abs() < 1.0,
        "{f0:?}"
    );
    let band = &r[last]["freq_hz"]["monte_carlo"];
    assert!(
        band["low"].as_f64().unwrap() > (f0[last] * f0[last - 1]).sqrt(),
        "{band}"
    );
    let mut counted = 0;
    for (j, x) in r.iter().enumerate() {
        let missing = x["freq_hz"]["monte_carlo"]["missing"].as_u64().unwrap();
        if missing > 0 {
            counted += 1;
            let said = format!("resonance {} (", j + 1);
            let line = text.lines().find(|l| l.trim_start().starts_with(&said));
            assert!(
                line.is_some_and(|l| l.contains(&format!("is missing from {missing} of 200 draws"))),
                "{text}"
            );
        }
    }
    assert!(counted > 0 && r[last]["freq_hz"]["monte_carlo"]["missing"].as_u64() > Some(0));
    let _ = std::fs::remove_dir_all(dir);
}

/// `ripline sweep --bands` over 1500..2500 rpm on the quarter-wave line
/// (laminar friction) with c = 1200 m/s ± 5 %: the ripple is worst where
/// the first harmonic, 9 × speed, meets the resonance c/4L, at 60·c/(4L·9)
/// = 2000 rpm for the nominal c (friction lowers it slightly); as the
/// resonance is proportional to c, the 90 % band of the worst speed is its
/// nominal value × (1 ∓ 0.045), as for the resonance above.
#[test]
fn sweep_bands_of_the_worst_speed_are_the_image_of_the_wave_speed() {
    let (dir, circuit) = circuit_in_scratch(
        "sweep",
        "quarter.yaml",
        &quarter_wave("1200 m/s ± 5 %", "laminar"),
    );
    let json = dir.join("sweep.json");
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_ripline"))
        .args([
            "sweep",
            circuit.to_str().unwrap(),
            "--speed-range",
            "1500..2500",
        ])
        .args(["--bands", "monte-carlo", "--draws", "1000"])
        .args(["--json", json.to_str().unwrap()])
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let text = String::from_utf8(o.stdout).unwrap();
    assert!(text.contains("worst speed rpm"), "{text}");
    let v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(json).unwrap()).unwrap();
    let p = &v["result"]["bands"]["points"][0];
    let w = &p["worst_speed_rev_s"];
    let nominal = w["nominal"].as_f64().unwrap() * 60.0;
    assert!(nominal < 2000.0 && nominal > 0.98 * 2000.0, "{nominal}");
    let lo = w["monte_carlo"]["low"].as_f64().unwrap() * 60.0;
    let hi = w["monte_carlo"]["high"].as_f64().unwrap() * 60.0;
    // the quantile's sampling sd with 1000 draws is 0.1·2000·√(0.0475/1000)
    // = 1.4 rpm; allow 4 of them and 2 rpm for the refinement
    let tol = 4.0 * 1.4 + 2.0;
    assert!((lo - 0.955 * nominal).abs() < tol, "{lo} of {nominal}");
    assert!((hi - 1.045 * nominal).abs() < tol, "{hi} of {nominal}");
    assert_eq!(
        p["rms_pa"].as_array().unwrap().len(),
        v["result"]["speeds_rev_s"].as_array().unwrap().len()
    );
    let _ = std::fs::remove_dir_all(dir);
}

/// A worst speed that jumps between two crossings over the draws is said
/// with each place's share. The quarter-wave line (c = 1200 m/s, laminar
/// friction) resonates at c/4L = 300 Hz; a 9-element pump meets it with its
/// first harmonic at 2000 rpm and with its second at 1000 rpm. The source
/// flow is in proportion to speed (ripline's model of a pump's source flow
/// ripple), so with amplitudes a and b written at 1500 rpm the two peaks
/// are a·(2000/1500)·|Z(300 Hz)| and b·(1000/1500)·|Z(300 Hz)|, the same
/// impedance: the worst is at 2000 rpm exactly when a > b/2. With
/// b = 2.08 L/min and a = 1 L/min ± 10 % (rectangular), that is a > 1.04,
/// whose probability is (1.1 − 1.04)/0.2 = 0.30 (by hand). The other
/// harmonic adds under 1e-3 of a peak's mean square at either speed (the
/// second harmonic at 2000 rpm sits on the 600 Hz anti-resonance, the
/// first at 1000 rpm on |Z| = Zc), which moves the threshold by about 1e-4
/// and the share by under 0.001. With 1,000 draws the share's sampling
/// standard deviation is √(0.3·0.7/1000) = 0.0145; the test allows 4.
#[test]
fn sweep_bands_say_where_a_jumping_worst_speed_lies() {
    let text = "\
title: quarter-wave line fed by two harmonics (invented)
fluid: {density: 870 kg/m3, bulk_modulus: 1.6 GPa, viscosity: 32 cSt}
line_model: laminar
pump:
  node: a
  speed: 1500 rpm
  pumping_elements: 9
  flow_ripple:
    - {harmonic: 1, amplitude: \"1 L/min ± 10 %\"}
    - {harmonic: 2, amplitude: 2.08 L/min}
  source_impedance: {volume: 0 L}
elements:
  - {name: line, kind: hose, from: a, to: b, length: 1 m, bore: 25 mm, wave_speed: 1200 m/s, loss_factor: 0}
  - {name: tank, kind: tank, at: b}
taps:
  - {name: pump outlet, node: a}
";
    let (dir, circuit) = circuit_in_scratch("places", "two.yaml", text);
    let json = dir.join("sweep.json");
    let (text, v) = ripline_json(
        &[
            "sweep",
            circuit.to_str().unwrap(),
            "--speed-range",
            "800..2400",
            "--speed-step",
            "10",
            "--bands",
            "monte-carlo",
            "--draws",
            "1000",
        ],
        &json,
    );
    assert!(
        text.contains("worst speed in more than one place over the draws"),
        "{text}"
    );
    let places = v["result"]["bands"]["points"][0]["worst_speed_places"]
        .as_array()
        .unwrap();
    assert_eq!(places.len(), 2, "{places:?}");
    let rpm = |p: &serde_json::Value, key: &str| p[key].as_f64().unwrap() * 60.0;
    // friction lowers the resonance slightly: within 2 % below each speed
    for (p, speed) in places.iter().zip([1000.0, 2000.0]) {
        for key in ["low_rev_s", "high_rev_s"] {
            let n = rpm(p, key);
            assert!(n <= speed && n > 0.98 * speed, "{key} {n} rpm near {speed}");
        }
    }
    let share = places[1]["share"].as_f64().unwrap();
    assert!((share - 0.30).abs() < 4.0 * 0.0145, "{share}");
    assert_eq!(
        places[0]["draws"].as_u64().unwrap() + places[1]["draws"].as_u64().unwrap(),
        1000
    );
    // the nominal a = 1 < 1.04: the nominal worst is the 1000 rpm one
    assert_eq!(places[0]["nominal"], true);
    assert_eq!(places[1]["nominal"], false);
    let _ = std::fs::remove_dir_all(dir);
}

/// `response --bands` and `sweep --bands` on a circuit with nothing
/// uncertain: exit 2, nothing written, the error says how to add a
/// tolerance.
#[test]
fn response_and_sweep_bands_of_a_circuit_with_nothing_uncertain_are_refused() {
    let (dir, circuit) =
        circuit_in_scratch("none", "certain.yaml", &quarter_wave("1200 m/s", "laminar"));
    let json = dir.join("out.json");
    for args in [
        ["response", "--band", "100..1000", "--bands", "monte-carlo"],
        [
            "sweep",
            "--speed-range",
            "1500..2500",
            "--bands",
            "first-order",
        ],
    ] {
        let o = std::process::Command::new(env!("CARGO_BIN_EXE_ripline"))
            .args(args)
            .args([circuit.to_str().unwrap(), "--json", json.to_str().unwrap()])
            .output()
            .unwrap();
        assert_eq!(o.status.code(), Some(2), "{args:?}");
        assert!(o.stdout.is_empty(), "{args:?}");
        assert!(!json.exists(), "{args:?}");
        let err = String::from_utf8_lossy(&o.stderr);
        assert!(err.contains("tolerance"), "{args:?}: {err}");
    }
    let _ = std::fs::remove_dir_all(dir);
}

/// A pump that is an ideal flow source (no source volume) feeding a volume
/// V of oil of bulk modulus B in parallel with a resistance R to tank (an
/// orifice): the volume's hydraulic capacitance is C = V/B (the lumped
/// compliance, e.g. Merritt, *Hydraulic Control Systems*, §3.3), so each
/// harmonic's pressure is |P| = |Q|·R/√(1 + (ωRC)²), the parallel RC
/// impedance. One harmonic of amplitude Q ± 10 % (limits) at the pump's
/// 1500 rpm; a flow table scales with speed (Q·n/1500 rpm), so |P| grows
/// with speed (ωRC ≫ 1 here: |P| → Q·n/(1500 rpm·ωC), a constant, from
/// below) and the worst rms is at the top speed, n = 2500 rpm, ω = 2π·z·n.
/// It is proportional to Q: its 90 % band is P_rms × [0.91, 1.09] (the
/// 5th..95th percentiles of the rectangular distribution, as above).
fn compliance_case(ratios: &[f64]) -> (String, f64) {
    let (b, v, r, z, n) = (1.6e9, 1e-3, 1e10, 9.0, 2500.0 / 60.0);
    let q = 1.0 / 60_000.0 * 2500.0 / 1500.0;
    let omega = 2.0 * std::f64::consts::PI * z * n;
    let p_rms = q * r / (2f64.sqrt() * (1.0 + (omega * r * v / b).powi(2)).sqrt());
    let taps: String = (0..ratios.len())
        .map(|i| format!("  - {{name: tap{i}, node: a}}\n"))
        .collect();
    let limits: String = ratios
        .iter()
        .enumerate()
        .map(|(i, r)| format!("  - {{tap: tap{i}, rms: {:.6} Pa}}\n", r * p_rms))
        .collect();
    (
        format!(
            "\
title: pump into a volume and an orifice (invented verdict test)
fluid: {{density: 870 kg/m3, bulk_modulus: 1.6 GPa, viscosity: 32 cSt}}
pump:
  node: a
  speed: 1500 rpm
  speed_range: [1500 rpm, 2500 rpm]
  pumping_elements: 9
  flow_ripple: [{{harmonic: 1, amplitude: \"1 L/min ± 10 %\"}}]
  source_impedance: {{volume: 0 L}}
elements:
  - {{name: chamber, kind: volume, at: a, volume: 1 L}}
  - {{name: restrictor, kind: orifice, from: a, to: b, resistance: 1e10}}
  - {{name: tank, kind: tank, at: b}}
taps:
{taps}limits:
{limits}"
        ),
        p_rms,
    )
}

/// A row of the verdicts CSV: status, worst, band low and high ends.
type VerdictRow = (String, f64, f64, f64);

/// Runs `assess` with `args` on `text`; the exit code and the rows of the
/// verdicts CSV (status, worst, low, high).
fn assess_verdicts(
    dir: &std::path::Path,
    name: &str,
    text: &str,
    args: &[&str],
) -> (Option<i32>, Vec<VerdictRow>) {
    let circuit = dir.join(format!("{name}.yaml"));
    std::fs::write(&circuit, text).unwrap();
    let csv = dir.join(format!("{name}.csv"));
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_ripline"))
        .args(["assess", circuit.to_str().unwrap()])
        .args(["--verdicts-csv", csv.to_str().unwrap()])
        .args(args)
        .output()
        .unwrap();
    let table = std::fs::read_to_string(&csv)
        .unwrap_or_else(|_| panic!("{}", String::from_utf8_lossy(&o.stderr)));
    let mut lines = table.lines();
    assert_eq!(
        lines.next().unwrap(),
        "point,limit,limit_pa,verdict,harmonic,speed_rpm,pressure_pa,temperature_c,case,frequency_hz,worst_pa,margin_db,worst_low_pa,worst_high_pa,band_margin_db,coverage"
    );
    let rows = lines
        .map(|l| {
            let c: Vec<&str> = l.split(',').collect();
            let num = |i: usize| c[i].parse::<f64>().unwrap_or(f64::NAN);
            (c[3].to_string(), num(10), num(12), num(13))
        })
        .collect();
    (o.status.code(), rows)
}

/// `assess --bands`: limits at 1.15, 1.05, 0.95 and 0.85 × the nominal
/// worst of the compliance case. Its band is nominal × [0.91, 1.09], so
/// the first is PASS (the whole band within), the second UNCERTAIN (the
/// limit inside the band, above the nominal), the third FAIL with the band
/// reaching below the limit (the conservative reading: the nominal is over)
/// and the fourth FAIL with the whole band over. Without `--bands` the
/// first two pass. The exit code is 3 with a FAIL, 4 with an UNCERTAIN and
/// no FAIL, 0 when all pass.
#[test]
fn verdicts_with_bands_pass_fail_or_are_uncertain() {
    let dir = scratch_dir("assess");
    let (text, p_rms) = compliance_case(&[1.15, 1.05, 0.95, 0.85]);
    let bands = ["--bands", "monte-carlo", "--speeds", "21"];
    let (code, rows) = assess_verdicts(&dir, "all", &text, &bands);
    assert_eq!(code, Some(3));
    let words: Vec<&str> = rows.iter().map(|r| r.0.as_str()).collect();
    assert_eq!(words, ["pass", "uncertain", "fail", "fail"]);
    for (_, worst, lo, hi) in &rows {
        assert!(
            (worst / p_rms - 1.0).abs() < 1e-6,
            "{worst} against {p_rms}"
        );
        // sampling error of the 5 % quantile with ≥ 2000 draws, as above
        assert!((lo / worst - 0.91).abs() < 0.004, "{lo} of {worst}");
        assert!((hi / worst - 1.09).abs() < 0.004, "{hi} of {worst}");
    }
    // without --bands: by the nominal worst
    let (code, rows) = assess_verdicts(&dir, "nominal", &text, &["--speeds", "21"]);
    assert_eq!(code, Some(3));
    let words: Vec<&str> = rows.iter().map(|r| r.0.as_str()).collect();
    assert_eq!(words, ["pass", "pass", "fail", "fail"]);
    assert!(rows.iter().all(|r| r.2.is_nan() && r.3.is_nan()));
    // an UNCERTAIN and no FAIL: exit code 4; moved clear of the band: 0
    let (text, _) = compliance_case(&[1.15, 1.05]);
    let (code, _) = assess_verdicts(&dir, "uncertain", &text, &bands);
    assert_eq!(code, Some(4));
    let (text, _) = compliance_case(&[1.15, 1.12]);
    let (code, rows) = assess_verdicts(&dir, "pass", &text, &bands);
    assert_eq!(code, Some(0));
    assert!(rows.iter().all(|r| r.0 == "pass"));
    // first order: nominal × (1 ± k·0.1/√3), k = 1.6449 (scipy
    // `norm.ppf(0.95)`): 1.05 is inside, 1.12 outside
    let (text, _) = compliance_case(&[1.12, 1.05]);
    let (code, rows) = assess_verdicts(
        &dir,
        "first",
        &text,
        &["--bands", "first-order", "--speeds", "21"],
    );
    assert_eq!(code, Some(4));
    let k_u = 1.644_853_626_951_472_2 * 0.1 / 3f64.sqrt();
    for (_, worst, lo, hi) in &rows {
        assert!((lo / worst - (1.0 - k_u)).abs() < 1e-6, "{lo} of {worst}");
        assert!((hi / worst - (1.0 + k_u)).abs() < 1e-6, "{hi} of {worst}");
    }
    assert_eq!(rows[0].0, "pass");
    assert_eq!(rows[1].0, "uncertain");
    let _ = std::fs::remove_dir_all(dir);
}

/// `response --bands` over a band with no resonance (20–200 Hz below the
/// quarter-wave line's first, c/4L = 300 Hz) gives the bands of the
/// curves. The line is lossless, its end at the tank open and the pump an
/// ideal flow source, so |P/Q| = (ρc/A)·tan(ωL/c), which falls as c rises
/// (d/dc[c·tan(k/c)] = tan x − x·sec²x < 0 for 0 < x < π/2): the band's ends
/// at frequency f are that value at the 95th and 5th percentiles of c,
/// 1200·(1 ± 0.045) m/s (c rectangular over ±5 %, README). With 400 draws
/// the percentiles of c carry a sampling error of about 0.11 % (√(p(1−p)/n)
/// over the density), which moves |P/Q| at 100 Hz (sensitivity −0.21) by
/// under 0.03 %; checked to 0.2 %.
#[test]
fn response_bands_without_a_resonance_band_the_curves() {
    let (dir, circuit) = circuit_in_scratch(
        "flat",
        "quarter.yaml",
        &quarter_wave("1200 m/s ± 5 %", "lossless"),
    );
    let csv = dir.join("r.csv");
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_ripline"))
        .args(["response", circuit.to_str().unwrap(), "--band", "20..200"])
        .args(["--bands", "monte-carlo", "--draws", "400"])
        .args(["--csv", csv.to_str().unwrap()])
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let report = String::from_utf8_lossy(&o.stdout);
    assert!(report.contains("no resonance in the band: the bands of the curves are in the CSV"));
    let table = std::fs::read_to_string(&csv).unwrap();
    let (rho, area, length) = (870.0, std::f64::consts::PI * 0.0125f64.powi(2), 1.0);
    let z = |f: f64, c: f64| rho * c / area * (2.0 * std::f64::consts::PI * f * length / c).tan();
    let mut checked = 0;
    for line in table.lines().skip(1) {
        let c: Vec<&str> = line.split(',').collect();
        let f: f64 = c[1].parse().unwrap();
        if c[0] != "pump outlet" || !(90.0..110.0).contains(&f) {
            continue;
        }
        let (low, high): (f64, f64) = (c[4].parse().unwrap(), c[5].parse().unwrap());
        let (want_low, want_high) = (z(f, 1200.0 * 1.045), z(f, 1200.0 * 0.955));
        assert!(
            (low / want_low - 1.0).abs() < 2e-3,
            "{f} Hz: {low} vs {want_low}"
        );
        assert!(
            (high / want_high - 1.0).abs() < 2e-3,
            "{f} Hz: {high} vs {want_high}"
        );
        checked += 1;
    }
    assert!(checked > 0);
    let _ = std::fs::remove_dir_all(dir);
}

/// `assess --bands` over two load cases of the compliance case, with the
/// bulk modulus B ± 20 % (rectangular) the only uncertain input: in case
/// "open" (chamber 1 L, restrictor R₁ = 1e10) the rms ripple
/// Q·R/√(2(1 + (ωRV/B)²)) is nearly proportional to B (ωR₁C ≈ 15); in case
/// "throttled" (chamber 1 mL, R₂ = 6.6e8, ωR₂C ≈ 1e-3) it is Q·R₂/√2 and
/// hardly moves, 0.3 dB below the open case's nominal. Both rise with B and
/// with speed (worst at the top speed, as above), so a draw's worst over the
/// two cases is the larger of the two at the drawn B and its percentiles
/// are that larger value at B's percentiles, 1.6 GPa × (1 ± 0.18) (90 %:
/// 5th and 95th of the rectangular distribution). The low end is then the
/// throttled case's value, not the open case's at 0.82·B: the throttled
/// case is the worst in the draws where B is low. With first-order bands,
/// the highest low end and the highest high end of the two cases'.
#[test]
fn a_verdicts_band_covers_the_envelope_points_that_can_be_worst() {
    let (b, v, r1, r2, z, n) = (1.6e9, 1e-3, 1e10, 6.6e8, 9.0, 2500.0 / 60.0);
    let q = 1.0 / 60_000.0 * 2500.0 / 1500.0;
    let omega = 2.0 * std::f64::consts::PI * z * n;
    let rms =
        |r: f64, v: f64, b: f64| q * r / (2f64.sqrt() * (1.0 + (omega * r * v / b).powi(2)).sqrt());
    let open = |b: f64| rms(r1, v, b);
    let throttled = |b: f64| rms(r2, 1e-6, b);
    assert!(throttled(b) < open(b) && throttled(b) > 0.95 * open(b));
    let (text, _) = compliance_case(&[1.5]);
    let text = text
        .replace("bulk_modulus: 1.6 GPa", "bulk_modulus: \"1.6 GPa ± 20 %\"")
        .replace("amplitude: \"1 L/min ± 10 %\"", "amplitude: 1 L/min")
        + "envelope:\n  cases:\n    - {name: open}\n    - name: throttled\n      set:\n        chamber: {volume: 1 mL}\n        restrictor: {resistance: 6.6e8}\n";
    let dir = scratch_dir("rivals");
    let bands = ["--bands", "monte-carlo", "--speeds", "21"];
    let (code, rows) = assess_verdicts(&dir, "mc", &text, &bands);
    assert_eq!(code, Some(0), "{rows:?}");
    let (_, worst, lo, hi) = rows[0].clone();
    assert!(
        (worst / open(b) - 1.0).abs() < 1e-6,
        "{worst} against {}",
        open(b)
    );
    let (b_lo, b_hi) = (b * 0.82, b * 1.18);
    assert!(
        (lo / throttled(b_lo) - 1.0).abs() < 1e-6,
        "{lo} against {}",
        throttled(b_lo)
    );
    assert!(
        open(b_lo) < 0.9 * lo,
        "the open case alone would give a lower end"
    );
    // sampling error of the 95 % quantile with ≥ 2000 draws, as above
    assert!(
        (hi / open(b_hi) - 1.0).abs() < 0.004,
        "{hi} against {}",
        open(b_hi)
    );
    let (code, rows) = assess_verdicts(
        &dir,
        "first",
        &text,
        &["--bands", "first-order", "--speeds", "21"],
    );
    assert_eq!(code, Some(0));
    // first order: value ± k·|∂value/∂B|·u(B), u(B) = 0.2·B/√3, k = 1.6449
    // (scipy `norm.ppf(0.95)`), the derivative by central differences here
    let k_u = 1.644_853_626_951_472_2 * 0.2 * b / 3f64.sqrt();
    let slope = |f: &dyn Fn(f64) -> f64| (f(b * 1.000_001) - f(b * 0.999_999)) / (2e-6 * b);
    let (_, _, lo, hi) = rows[0].clone();
    assert!(
        (lo / (throttled(b) - k_u * slope(&throttled)) - 1.0).abs() < 1e-5,
        "{lo}"
    );
    assert!(
        (hi / (open(b) + k_u * slope(&open)) - 1.0).abs() < 1e-3,
        "{hi}"
    );
    let _ = std::fs::remove_dir_all(dir);
}

/// Six load cases that change nothing are six envelope points with the same
/// worst: each is a rival of the first, so 4 are drawn (`MAX_DRAWN_POINTS`)
/// and 2 counted as left out (JSON `points_drawn`, `points_left_out`). The
/// largest of equal values is that value, so the first-order band is the
/// compliance case's own: nominal × (1 ± k·0.1/√3), k = 1.6449 (scipy
/// `norm.ppf(0.95)`), the flow ± 10 % rectangular.
#[test]
fn a_verdict_draws_at_most_four_envelope_points() {
    let (text, p_rms) = compliance_case(&[1.5]);
    let cases: String = (0..6)
        .map(|i| format!("    - {{name: case {i}}}\n"))
        .collect();
    let text = text + "envelope:\n  cases:\n" + &cases;
    let (dir, circuit) = circuit_in_scratch("cap", "six.yaml", &text);
    let json = dir.join("six.json");
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_ripline"))
        .args(["assess", circuit.to_str().unwrap(), "--speeds", "21"])
        .args(["--bands", "first-order", "--json", json.to_str().unwrap()])
        .output()
        .unwrap();
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&json).unwrap()).unwrap();
    let b = &v["result"]["verdict_bands"]["verdicts"][0];
    assert_eq!(b["points_drawn"], 4, "{b}");
    assert_eq!(b["points_left_out"], 2, "{b}");
    let k_u = 1.644_853_626_951_472_2 * 0.1 / 3f64.sqrt();
    let band = &b["worst_pa"]["linear"];
    let (lo, hi) = (
        band["low"].as_f64().unwrap(),
        band["high"].as_f64().unwrap(),
    );
    assert!((lo / p_rms - (1.0 - k_u)).abs() < 1e-6, "{lo} of {p_rms}");
    assert!((hi / p_rms - (1.0 + k_u)).abs() < 1e-6, "{hi} of {p_rms}");
    let text = String::from_utf8(o.stdout).unwrap();
    assert!(
        text.contains("over 4 envelope points (2 more could be worst and were not drawn)"),
        "{text}"
    );
    let _ = std::fs::remove_dir_all(dir);
}

/// `assess --bands --plot`: the chart of a point with an rms limit draws
/// the band of its worst value as an error bar at the worst point, named
/// by its coverage in the legend; without `--bands` there is none.
#[test]
fn the_assess_chart_draws_the_worst_values_band() {
    let (text, _) = compliance_case(&[1.05]);
    let (dir, circuit) = circuit_in_scratch("chart", "c.yaml", &text);
    let chart = |name: &str, bands: &[&str]| {
        let svg = dir.join(name);
        let o = std::process::Command::new(env!("CARGO_BIN_EXE_ripline"))
            .args(["assess", circuit.to_str().unwrap(), "--speeds", "21"])
            .args(["--plot", svg.to_str().unwrap()])
            .args(bands)
            .output()
            .unwrap();
        assert!(svg.exists(), "{}", String::from_utf8_lossy(&o.stderr));
        std::fs::read_to_string(svg).unwrap()
    };
    let with = chart("with.svg", &["--bands", "monte-carlo", "--coverage", "95"]);
    assert!(roxmltree::Document::parse(&with).is_ok());
    assert!(with.contains("worst, 95.0 % band"));
    let without = chart("without.svg", &[]);
    assert!(!without.contains("% band"));
    let _ = std::fs::remove_dir_all(dir);
}

/// `response --bands` and `sweep --bands` write the ends of each
/// amplitude's band as CSV columns (the headers pinned here), the same
/// numbers as the JSON's bands; their plots carry the shaded bands (a
/// filled polygon in the SVG).
#[test]
fn csv_band_columns_agree_with_the_json_and_the_plots_shade_them() {
    let (dir, circuit) = circuit_in_scratch(
        "csv",
        "quarter.yaml",
        &quarter_wave("1200 m/s ± 5 %", "laminar"),
    );
    let run = |args: &[&str]| {
        let o = std::process::Command::new(env!("CARGO_BIN_EXE_ripline"))
            .args(args)
            .args([circuit.to_str().unwrap()])
            .args(["--bands", "monte-carlo", "--draws", "200"])
            .current_dir(&dir)
            .output()
            .unwrap();
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    };
    let read = |name: &str| std::fs::read_to_string(dir.join(name)).unwrap();
    let json = |name: &str| -> serde_json::Value { serde_json::from_str(&read(name)).unwrap() };
    let num = |s: &str| s.parse::<f64>().unwrap();

    run(&[
        "response",
        "--band",
        "100..1000",
        "--csv",
        "r.csv",
        "--json",
        "r.json",
        "--plot",
        "r.svg",
    ]);
    let table = read("r.csv");
    let mut lines = table.lines();
    assert_eq!(
        lines.next().unwrap(),
        "point,frequency_hz,amplitude_pa_per_m3s,phase_deg,amplitude_low_pa_per_m3s,amplitude_high_pa_per_m3s"
    );
    let v = json("r.json");
    let curves = v["result"]["uncertainty_bands"]["curves"]
        .as_array()
        .unwrap();
    assert_eq!(curves.len(), 2); // the pump outlet and the impedance it sees
    let rows: Vec<Vec<&str>> = lines.map(|l| l.split(',').collect()).collect();
    let n = rows.len() / 2;
    for (i, row) in rows.iter().enumerate() {
        let c = &curves[i / n];
        assert_eq!(row[0], c["name"].as_str().unwrap());
        assert_eq!(num(row[4]), c["low"][i % n].as_f64().unwrap());
        assert_eq!(num(row[5]), c["high"][i % n].as_f64().unwrap());
        assert!(num(row[4]) <= num(row[5]));
    }
    assert!(read("r.svg").contains("<polygon"));

    run(&[
        "sweep",
        "--speed-range",
        "1500..2500",
        "--csv",
        "s.csv",
        "--json",
        "s.json",
        "--plot",
        "s.svg",
    ]);
    let table = read("s.csv");
    let mut lines = table.lines();
    assert_eq!(
        lines.next().unwrap(),
        "speed_rpm,point,harmonic,frequency_hz,amplitude_pa,amplitude_low_pa,amplitude_high_pa"
    );
    let v = json("s.json");
    let p = &v["result"]["bands"]["points"][0];
    let rms = p["rms_pa"].as_array().unwrap();
    let amps = &p["amplitudes"][0];
    let rows: Vec<Vec<&str>> = lines.map(|l| l.split(',').collect()).collect();
    assert_eq!(rows.len(), rms.len()); // one harmonic, one point
    for (si, row) in rows.iter().enumerate() {
        let (lo, hi) = (num(row[5]), num(row[6]));
        assert_eq!(lo, amps["low_pa"][si].as_f64().unwrap());
        assert_eq!(hi, amps["high_pa"][si].as_f64().unwrap());
        // with one harmonic the rms is |P|/√2 in every draw, so its band
        // is the amplitude's band over √2 (to the 32-bit samples' digits)
        let r = &rms[si]["monte_carlo"];
        let s2 = 2f64.sqrt();
        assert!((r["low"].as_f64().unwrap() * s2 / lo - 1.0).abs() < 1e-6);
        assert!((r["high"].as_f64().unwrap() * s2 / hi - 1.0).abs() < 1e-6);
    }
    assert!(read("s-levels.svg").contains("<polygon"));
    assert!(!read("s.svg").contains("<polygon"));
    let _ = std::fs::remove_dir_all(dir);
}

// A normal standard uncertainty reaches any value, so a value that must
// stay non-negative is drawn below zero now and then: such draws are made
// again, and the draws follow the normal truncated to the values the
// circuit accepts. Harmonic 1 of the source flow with u = 40 % of
// 1.3 L/min: the pressure of harmonic 1 is proportional to it, so its band
// over its nominal is 1 + 0.4·z at the quantiles of a standard normal
// truncated to z ≥ −2.5: z = −1.59016 and 1.64787 at 5 % and 95 %
// (mpmath 1.3: findroot(ncdf(z) − (q + p(1 − q))), q = ncdf(−2.5)),
// against −1.64485 and 1.64485 untruncated. The share of draws made again
// is q/(1 − q) = 0.0062485 (mpmath). Sampling error of the 5 % end with
// 20,000 draws: 0.4·√(0.05·0.95/M)/pdf ≈ 0.006 (pdf of the truncated
// normal there ≈ 0.105). A tolerance that reaches below zero in more than
// 1 % of draws (± 2 L/min: 17.5 %) is refused with exit 2, naming the value.
#[test]
fn draws_below_a_values_range_are_made_again_and_too_many_are_refused() {
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
    let model = std::fs::read_to_string(root.join("networks/calibration/log_loader.yaml")).unwrap();
    let with = |tolerance: &str| {
        model
            .replace(
                "{harmonic: 1, amplitude: 1.3 L/min, phase: 0 deg}",
                &format!("{{harmonic: 1, amplitude: \"1.3 L/min{tolerance}\", phase: 0 deg}}"),
            )
            .replace("1.6 GPa ± 10 %", "1.6 GPa")
    };
    let (dir, circuit) = circuit_in_scratch("redraw", "normal.yaml", &with(", u = 40 %"));
    let (csv, json) = (dir.join("bands.csv"), dir.join("bands.json"));
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_ripline"))
        .args(["solve", circuit.to_str().unwrap(), "--bands", "monte-carlo"])
        .args(["--draws", "20000", "--seed", "3"])
        .args([
            "--csv",
            csv.to_str().unwrap(),
            "--json",
            json.to_str().unwrap(),
        ])
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&json).unwrap()).unwrap();
    let info = &v["result"]["bands"]["info"];
    assert_eq!(info["draws"].as_u64(), Some(20_000));
    let redrawn = info["redrawn"].as_f64().unwrap();
    // binomial: mean 20,000·q/(1 − q) ≈ 125, standard deviation ≈ 11
    assert!((redrawn - 124.97).abs() < 45.0, "{redrawn}");
    let table = std::fs::read_to_string(&csv).unwrap();
    let mut checked = 0;
    for line in table.lines().skip(1) {
        let c: Vec<&str> = line.split(',').collect();
        if c[1] != "1" {
            continue;
        }
        let num = |i: usize| c[i].parse::<f64>().unwrap();
        let (nominal, low, high) = (num(3), num(5), num(6));
        assert!((low / nominal - 0.363_935).abs() < 0.018, "{line}");
        assert!((high / nominal - 1.659_149).abs() < 0.018, "{line}");
        checked += 1;
    }
    assert!(checked > 0);
    // limits reaching far below zero: refused, nothing written
    let wide = dir.join("wide.yaml");
    std::fs::write(&wide, with(" ± 2 L/min")).unwrap();
    let out = dir.join("wide.csv");
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_ripline"))
        .args(["solve", wide.to_str().unwrap(), "--bands", "monte-carlo"])
        .args(["--draws", "1000", "--csv", out.to_str().unwrap()])
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{stderr}");
    assert!(
        stderr.contains("set a value the circuit refuses")
            && stderr.contains("flow_ripple[0].amplitude"),
        "{stderr}"
    );
    assert!(!out.exists());
    let _ = std::fs::remove_dir_all(dir);
}

// A tolerance on a pump's speed range changes nothing a command computes
// (the range is what is analysed, not a value of the machine): refused at
// its line with exit 2 by every command, as one in the envelope is.
#[test]
fn a_tolerance_on_a_speed_range_is_refused_at_its_line() {
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
    let model = std::fs::read_to_string(root.join("networks/calibration/log_loader.yaml")).unwrap();
    let text = model.replace(
        "speed_range: [1000 rpm, 2000 rpm]",
        "speed_range: [\"1000 rpm ± 5 %\", 2000 rpm]",
    );
    assert_ne!(text, model);
    let (dir, circuit) = circuit_in_scratch("speed-range", "range.yaml", &text);
    let path = circuit.to_str().unwrap();
    for args in [
        vec!["solve", path, "--bands", "first-order"],
        vec!["solve", path],
        vec!["check", path],
    ] {
        let o = std::process::Command::new(env!("CARGO_BIN_EXE_ripline"))
            .args(&args)
            .output()
            .unwrap();
        let stderr = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {stderr}");
        assert!(
            stderr.contains("range.yaml:26:")
                && stderr.contains("speed_range")
                && stderr.contains("a tolerance is not read here"),
            "{args:?}: {stderr}"
        );
    }
    let _ = std::fs::remove_dir_all(dir);
}

/// The line (1-based) of the first line of `text` holding `needle`.
fn line_of(text: &str, needle: &str) -> usize {
    text.lines().position(|l| l.contains(needle)).unwrap() + 1
}

// A first-order step or a Monte Carlo draw the circuit refuses at an
// envelope point is located at the line of the value that carries the
// tolerance (the point named in words), not at the envelope key the point
// evaluator first moved it to.
#[test]
fn a_refused_draw_at_an_envelope_point_is_located_at_the_uncertain_value() {
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
    let model = std::fs::read_to_string(root.join("networks/loader_work_envelope.yaml")).unwrap();
    let at = "120 bar, 50 °C, lifting";
    // ± 5 percentage points of 0.3 %: value − u is below zero
    let air = model.replace("air_content: 0.3 %", "air_content: 0.3 % ± 5 %");
    assert_ne!(air, model);
    let (dir, circuit) = circuit_in_scratch("located", "air.yaml", &air);
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_ripline"))
        .args(["solve", circuit.to_str().unwrap(), "--bands", "first-order"])
        .args(["--at", at])
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{stderr}");
    let expected = format!(
        "air.yaml:{}:3: fluid.air_content: at envelope point `{at}`: free air content",
        line_of(&air, "air_content:")
    );
    assert!(stderr.contains(&expected), "{stderr}");
    assert!(!stderr.contains("envelope.pressures"), "{stderr}");
    // a drawn gas volume below zero, at a point of a load case
    let gas = model.replace("gas_volume: 0.32 L", "gas_volume: 0.32 L ± 0.5 L");
    assert_ne!(gas, model);
    let circuit = dir.join("gas.yaml");
    std::fs::write(&circuit, &gas).unwrap();
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_ripline"))
        .args(["solve", circuit.to_str().unwrap(), "--bands", "monte-carlo"])
        .args(["--draws", "100", "--at", at])
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{stderr}");
    let expected = format!(
        "gas.yaml:{}:5: elements[7].gas_volume: at envelope point `{at}`: must be greater than zero",
        line_of(&gas, "gas_volume:")
    );
    assert!(stderr.contains(&expected), "{stderr}");
    assert!(!stderr.contains("envelope.cases"), "{stderr}");
    let _ = std::fs::remove_dir_all(dir);
}

// In a file without an envelope, a refused step says nothing of envelope
// points: the bands are said to be the file's.
#[test]
fn a_refused_step_in_a_file_without_an_envelope_names_no_envelope_point() {
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
    let model = std::fs::read_to_string(root.join("networks/calibration/log_loader.yaml")).unwrap();
    let text = model.replace("1.6 GPa ± 10 %", "1.6 GPa ± 90 %");
    assert_ne!(text, model);
    let (dir, circuit) = circuit_in_scratch("no-envelope", "wide.yaml", &text);
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_ripline"))
        .args(["solve", circuit.to_str().unwrap(), "--bands", "first-order"])
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{stderr}");
    assert!(
        stderr.starts_with(&format!(
            "error: uncertainty bands of {}",
            circuit.display()
        )),
        "{stderr}"
    );
    assert!(
        stderr.contains("`fluid.bulk_modulus` at its value − u"),
        "{stderr}"
    );
    assert!(!stderr.contains("envelope point"), "{stderr}");
    let _ = std::fs::remove_dir_all(dir);
}
