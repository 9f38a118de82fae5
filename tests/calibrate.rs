//! Measured against predicted, and calibration, on synthetic measurements
//! of a circuit whose true values are known (an invented test line).
//!
//! The "measured" phasors are the true circuit's ripple plus circular
//! complex Gaussian noise of a stated standard uncertainty u (written in
//! the spectra files' `_u` columns), so the weights of the least squares
//! are exactly right and the calibration's stated uncertainties can be
//! checked against the spread of its errors over seeds.

use ripline::calibrate::compare::compare;
use ripline::calibrate::fit::{self, Calibration, Parameter, calibrate};
use ripline::calibrate::lm::Options;
use ripline::calibrate::measured::{
    MeasuredRun, Model, RecordSynthesis, read_measured, ripple_at_taps, synthesize_run,
};
use ripline::estimate::Quiet;
use ripline::estimate::rng::Rng;
use ripline::io::measurement_file::{Measurements, parse_measurements};
use ripline::io::records::write_time_record;
use ripline::io::{CircuitFile, CircuitTemplate, parse_circuit_file};
use std::path::{Path, PathBuf};

/// The test line with its three uncertain values in place.
fn circuit_text(bulk_modulus: &str, wave_speed: &str, volume: &str) -> String {
    format!(
        "\
title: calibration test line (an invented scenario)
fluid:
  density: 870 kg/m3
  bulk_modulus: {bulk_modulus}
  viscosity: 32 cSt
harmonics: 6
pump:
  name: pump
  node: outlet
  speed: 1500 rpm
  speed_range: [1000 rpm, 2000 rpm]
  pumping_elements: 9
  flow_ripple:
    - {{harmonic: 1, amplitude: 1.2 L/min, phase: 10 deg}}
    - {{harmonic: 2, amplitude: 0.5 L/min, phase: -40 deg}}
    - {{harmonic: 3, amplitude: 0.3 L/min, phase: 70 deg}}
    - {{harmonic: 4, amplitude: 0.2 L/min, phase: 5 deg}}
    - {{harmonic: 5, amplitude: 0.12 L/min, phase: -20 deg}}
    - {{harmonic: 6, amplitude: 0.08 L/min, phase: 30 deg}}
  source_impedance:
    volume: {volume}
elements:
  - name: pressure line
    kind: tube
    from: outlet
    to: bulkhead
    length: 2.4 m
    bore: 16 mm
    wall: 2 mm
    material: steel
  - {{name: hose, kind: hose, from: bulkhead, to: block, length: 1.5 m, bore: 16 mm, wave_speed: {wave_speed}, loss_factor: 0.08}}
  - name: valve
    kind: load_valve
    at: block
    resistance: 4e10
taps:
  - {{name: outlet, node: outlet}}
  - {{name: bulkhead, node: bulkhead}}
  - {{name: block, node: block}}
"
    )
}

const TRUE_B: f64 = 1.45;
const TRUE_C: f64 = 1050.0;
const TRUE_V: f64 = 0.12;

fn truth() -> String {
    circuit_text("1.45 GPa", "1050 m/s", "0.12 L")
}

fn start() -> String {
    circuit_text("1.7 GPa", "900 m/s", "0.2 L")
}

/// A fresh folder under the system's temporary folder.
fn folder(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("ripline-calibrate-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

const SPEEDS: [f64; 3] = [1100.0, 1450.0, 1900.0];

/// A measurement file of spectra runs at `SPEEDS`.
fn spectra_measurements(dir: &Path, circuit: &CircuitFile) -> Measurements {
    let mut text = String::from("title: spectra runs (invented)\nruns:\n");
    for (i, s) in SPEEDS.iter().enumerate() {
        text.push_str(&format!(
            "  - {{name: run {i}, speed: {s} rpm, spectra: run{i}.csv, unit: Pa, taps: [outlet, bulkhead, block]}}\n"
        ));
    }
    let file = dir.join("measured.yaml");
    std::fs::write(&file, &text).unwrap();
    parse_measurements(&text, &file.display().to_string(), circuit).unwrap()
}

/// Writes each run's spectra: the true ripple plus complex noise of
/// standard uncertainty `noise` × the tap's rms (and that u in `_u`
/// columns when `noise` > 0).
fn write_spectra(m: &Measurements, true_template: &CircuitTemplate, noise: f64, seed: u64) {
    let mut rng = Rng::new(seed);
    for run in &m.runs {
        let orders: Vec<u32> = (1..=6).collect();
        let p = ripple_at_taps(true_template, m, run, run.speed_rev_s, &orders, &[]).unwrap();
        let f1 = run.speed_rev_s * 9.0;
        let taps: Vec<&str> = run.taps.iter().map(|(_, n)| n.as_str()).collect();
        let mut csv = String::from("harmonic,frequency_hz");
        for t in &taps {
            csv.push_str(&format!(",{t}_re,{t}_im"));
            if noise > 0.0 {
                csv.push_str(&format!(",{t}_u"));
            }
        }
        csv.push('\n');
        let u: Vec<f64> = (0..taps.len())
            .map(|t| noise * (p.iter().map(|h| h[t].norm_sqr()).sum::<f64>() / 2.0).sqrt())
            .collect();
        for (k, h) in orders.iter().zip(&p) {
            csv.push_str(&format!("{k},{:?}", f64::from(*k) * f1));
            for t in 0..taps.len() {
                let v = h[t] + rng.complex_normal() * u[t];
                csv.push_str(&format!(",{:?},{:?}", v.re, v.im));
                if noise > 0.0 {
                    csv.push_str(&format!(",{:?}", u[t]));
                }
            }
            csv.push('\n');
        }
        std::fs::write(run.data.path(), csv).unwrap();
    }
}

fn parameters(template: &CircuitTemplate) -> Vec<Parameter> {
    vec![
        Parameter {
            target: template.target("fluid.bulk_modulus").unwrap(),
            low: 1.0,
            high: 2.5,
        },
        Parameter {
            target: template.target("hose.wave_speed").unwrap(),
            low: 600.0,
            high: 1500.0,
        },
        Parameter {
            target: template.target("pump.source_impedance.volume").unwrap(),
            low: 0.02,
            high: 1.0,
        },
    ]
}

struct Case {
    template: CircuitTemplate,
    measurements: Measurements,
    measured: Vec<MeasuredRun>,
    parameters: Vec<Parameter>,
}

fn spectra_case(dir: &Path, noise: f64, seed: u64) -> Case {
    let text = start();
    let file = dir.join("model.yaml").display().to_string();
    let circuit = parse_circuit_file(&text, &file).unwrap();
    let template = CircuitTemplate::new(&text, &file).unwrap();
    let true_template = CircuitTemplate::new(&truth(), "truth.yaml").unwrap();
    let measurements = spectra_measurements(dir, &circuit);
    write_spectra(&measurements, &true_template, noise, seed);
    let measured = read_measured(&measurements, &circuit, &mut Quiet).unwrap();
    let parameters = parameters(&template);
    Case {
        template,
        measurements,
        measured,
        parameters,
    }
}

fn run(case: &Case) -> Calibration {
    let model = Model {
        template: &case.template,
        measurements: &case.measurements,
        measured: &case.measured,
    };
    calibrate(
        &model,
        &case.measured,
        &case.parameters,
        &Options::default(),
    )
    .unwrap()
}

// Noise-free data: the calibration must find the true values (the model is
// exact, so the minimum is at zero residual) from starting values 17 %,
// 14 % and 67 % off.
#[test]
fn noise_free_data_recover_the_true_values_to_1e_8() {
    let dir = folder("noise-free");
    let case = spectra_case(&dir, 0.0, 1);
    let cal = run(&case);
    assert!(cal.stop.converged(), "{cal:?}");
    assert!(!cal.absolute_weights);
    for (e, want) in cal.estimates.iter().zip([TRUE_B, TRUE_C, TRUE_V]) {
        assert!(
            (e.value / want - 1.0).abs() < 1e-8,
            "{}: {} vs {want}",
            e.name,
            e.value
        );
    }
    assert!(
        cal.identifiability.weak.is_empty(),
        "{:?}",
        cal.identifiability
    );
    // the comparison with the calibrated values agrees to round-off
    let model = Model {
        template: &case.template,
        measurements: &case.measurements,
        measured: &case.measured,
    };
    let cmp = compare(&model, &case.measured, &cal.settings(&case.parameters)).unwrap();
    for t in &cmp.taps {
        assert!(t.rms_difference_db.unwrap() < 1e-6, "{t:?}");
    }
    let _ = std::fs::remove_dir_all(dir);
}

/// (est − true) for one seed and its covariance from the report.
fn errors_and_covariance(cal: &Calibration) -> (Vec<f64>, Vec<Vec<f64>>) {
    let truth = [TRUE_B, TRUE_C, TRUE_V];
    let e: Vec<f64> = cal
        .estimates
        .iter()
        .zip(truth)
        .map(|(e, t)| e.value - t)
        .collect();
    let u: Vec<f64> = cal
        .estimates
        .iter()
        .map(|e| e.uncertainty.unwrap())
        .collect();
    let c = (0..3)
        .map(|a| {
            (0..3)
                .map(|b| cal.correlation[a][b].unwrap() * u[a] * u[b])
                .collect()
        })
        .collect();
    (e, c)
}

/// eᵀ C⁻¹ e for 3 × 3 C (by Cramer's rule).
fn mahalanobis(e: &[f64], c: &[Vec<f64>]) -> f64 {
    let m = nalgebra::Matrix3::from_fn(|i, j| c[i][j]);
    let v = nalgebra::Vector3::from_column_slice(e);
    (v.transpose() * m.try_inverse().unwrap() * v)[(0, 0)]
}

// Over seeds the errors must match the stated covariance. For each seed
// d² = eᵀC⁻¹e is χ² with 3 degrees of freedom when the stated covariance
// is right (to first order; the noise here is 1 %, where the model is
// close to linear), so over N seeds Σd² is χ² with 3N degrees of freedom.
// Its 0.1 % and 99.9 % points for 3N = 72 are 40.5 and 114.8
// (scipy.stats.chi2.ppf(0.001, 72), chi2.ppf(0.999, 72); calibrate_refs.py):
// a stated uncertainty 25 % too small or too large fails. The larger run
// (`--ignored`, 400 seeds) is in DEVELOPERS.md.
#[test]
fn errors_over_seeds_have_the_stated_spread() {
    spread_over_seeds(24, 40.5, 114.8);
}

#[test]
#[ignore = "the larger documented run: 400 seeds, about 20 s"]
fn errors_over_many_seeds_have_the_stated_spread() {
    // chi2.ppf(0.001, 1200) = 1054.3, chi2.ppf(0.999, 1200) = 1357.1
    spread_over_seeds(400, 1054.3, 1357.1);
}

fn spread_over_seeds(seeds: u64, low: f64, high: f64) {
    let dir = folder(&format!("seeds-{seeds}"));
    let mut sum = 0.0;
    let mut z2 = [0.0; 3];
    // χ² beyond its 99.9 % point flags a misfit and scales the covariance:
    // with the right model that happens to 0.1 % of seeds
    let mut scaled = 0;
    for seed in 0..seeds {
        let case = spectra_case(&dir, 0.01, 1000 + seed);
        let cal = run(&case);
        assert!(cal.stop.converged() && cal.absolute_weights, "{cal:?}");
        scaled += usize::from(cal.scaled);
        let (e, c) = errors_and_covariance(&cal);
        sum += mahalanobis(&e, &c);
        for j in 0..3 {
            z2[j] += e[j] * e[j] / c[j][j];
        }
    }
    let spreads: Vec<f64> = z2.iter().map(|s| (s / seeds as f64).sqrt()).collect();
    eprintln!(
        "Σd² = {sum:.2} over {seeds} seeds (3N = {}), normalised spreads {spreads:.3?}",
        3 * seeds
    );
    assert!(
        (low..=high).contains(&sum),
        "Σd² = {sum}, outside {low} .. {high}"
    );
    assert!(
        scaled <= 1 + seeds as usize / 100,
        "{scaled} misfit flags in {seeds} seeds"
    );
    let _ = std::fs::remove_dir_all(dir);
}

// Time-series records made from the true circuit with 0.5 % noise, read
// and extracted as `fit` extracts bench records: the estimates must lie
// within 4 stated standard uncertainties of the truth, and the comparison
// with the true circuit must agree within the noise.
#[test]
fn time_series_records_are_extracted_and_calibrated() {
    let dir = folder("records");
    let text = start();
    let file = dir.join("model.yaml").display().to_string();
    let circuit = parse_circuit_file(&text, &file).unwrap();
    let template = CircuitTemplate::new(&text, &file).unwrap();
    let true_template = CircuitTemplate::new(&truth(), "truth.yaml").unwrap();
    let mut yaml =
        String::from("records: {unit: bar, sample_rate: 12 kHz}\nspeed_tolerance: 1 %\nruns:\n");
    for (i, s) in SPEEDS.iter().enumerate() {
        yaml.push_str(&format!(
            "  - {{name: run {i}, speed: {s} rpm, records: run{i}.csv, columns: {{outlet: p1, bulkhead: p2, block: p3}}}}\n"
        ));
    }
    let mfile = dir.join("measured.yaml");
    let m = parse_measurements(&yaml, &mfile.display().to_string(), &circuit).unwrap();
    for (i, run) in m.runs.iter().enumerate() {
        let synthesis = RecordSynthesis {
            sample_rate_hz: 12_000.0,
            duration_s: 1.0,
            noise: 0.005,
            seed: 40 + i as u64,
        };
        let channels = synthesize_run(&true_template, &m, run, &[], &synthesis).unwrap();
        let mut out = Vec::new();
        let ripline::estimate::bench::DataFile::TimeSeries { columns: cols, .. } = &run.data else {
            unreachable!("records")
        };
        write_time_record(
            &mut out,
            "synthetic",
            None,
            cols,
            &channels,
            12_000.0,
            1e5,
            true,
            None,
        )
        .unwrap();
        std::fs::write(run.data.path(), out).unwrap();
    }
    let measured = read_measured(&m, &circuit, &mut Quiet).unwrap();
    for (run, mr) in m.runs.iter().zip(&measured) {
        assert!(
            (mr.speed_rev_s / run.speed_rev_s - 1.0).abs() < 1e-5,
            "{mr:?}"
        );
        assert_eq!(mr.harmonics.len(), 6);
    }
    let model = Model {
        template: &true_template,
        measurements: &m,
        measured: &measured,
    };
    let cmp = compare(&model, &measured, &[]).unwrap();
    for t in &cmp.taps {
        // the true circuit against its own noisy records
        assert!(t.rms_normalised.unwrap() < 3.0, "{t:?}");
    }
    let parameters = parameters(&template);
    let model = Model {
        template: &template,
        measurements: &m,
        measured: &measured,
    };
    let cal = calibrate(&model, &measured, &parameters, &Options::default()).unwrap();
    assert!(cal.stop.converged());
    for (e, want) in cal.estimates.iter().zip([TRUE_B, TRUE_C, TRUE_V]) {
        let u = e.uncertainty.unwrap();
        assert!(
            (e.value - want).abs() < 4.0 * u,
            "{}: {} ± {u} vs {want}",
            e.name,
            e.value
        );
        assert!(u < 0.05 * want, "{}: u = {u}", e.name);
    }
    // the calibrated file: only the three values change
    let written =
        ripline::calibrate::write::calibrated_text(&template, &parameters, &cal, "measured.yaml")
            .unwrap();
    let changed: Vec<(&str, &str)> = text
        .lines()
        .zip(written.lines().skip(3))
        .filter(|(a, b)| a != b)
        .collect();
    assert_eq!(changed.len(), 3, "{changed:?}");
    let back = CircuitTemplate::new(&written, "calibrated.yaml").unwrap();
    let b = back.target("fluid.bulk_modulus").unwrap();
    assert!((b.written.number - cal.estimates[0].value).abs() < 1e-4);
    assert!(b.written.tolerance.is_some());
    let _ = std::fs::remove_dir_all(dir);
}

// Two values the data cannot tell apart: two load valves at one node act
// only through their parallel conductance 1/R1 + 1/R2 (Kirchhoff's current
// law), so with equal resistances their log-scaled Jacobian columns are
// equal and the pair must be named as not identifiable.
#[test]
fn parameters_the_data_cannot_separate_are_named() {
    let dir = folder("blind");
    let text = start().replace(
        "taps:",
        "  - {name: second valve, kind: load_valve, at: block, resistance: 4e10}\ntaps:",
    );
    let file = dir.join("model.yaml").display().to_string();
    let circuit = parse_circuit_file(&text, &file).unwrap();
    let template = CircuitTemplate::new(&text, &file).unwrap();
    let measurements = spectra_measurements(&dir, &circuit);
    write_spectra(
        &measurements,
        &CircuitTemplate::new(&truth(), "t.yaml").unwrap(),
        0.01,
        3,
    );
    let measured = read_measured(&measurements, &circuit, &mut Quiet).unwrap();
    let parameters = vec![
        Parameter {
            target: template.target("valve.resistance").unwrap(),
            low: 1e9,
            high: 1e12,
        },
        Parameter {
            target: template.target("second valve.resistance").unwrap(),
            low: 1e9,
            high: 1e12,
        },
    ];
    let model = Model {
        template: &template,
        measurements: &measurements,
        measured: &measured,
    };
    let cal = calibrate(&model, &measured, &parameters, &Options::default()).unwrap();
    let id = &cal.identifiability;
    let blind = id
        .weak
        .iter()
        .find(|d| d.unidentifiable)
        .expect("a blind direction");
    let names: Vec<&str> = blind.parameters.iter().map(|(n, _)| n.as_str()).collect();
    assert_eq!(names, ["valve.resistance", "second valve.resistance"]);
    assert!(cal.estimates.iter().all(|e| e.uncertainty.is_none()));
    let _ = std::fs::remove_dir_all(dir);
}

// A bound that could never be a calibrated value is refused before any
// work, at the value it bounds; a bound valid only with another value
// moved within its bounds is taken. Physical limits: a bulk modulus is
// positive; a hose's wave speed cannot exceed the speed of sound in the oil
// it carries, √(K/ρ) (Korteweg: a compliant wall only slows the wave).
#[test]
fn bounds_the_circuit_refuses_whatever_the_others_are_named() {
    let template = CircuitTemplate::new(&start(), "start.yaml").unwrap();
    let mut p = parameters(&template);
    // 1,500 m/s needs K ≥ ρc² ≈ 1.96 GPa: the modulus's upper bound 2.5 GPa
    // allows it
    assert!(fit::refused_bound(&template, &p).is_none());
    p[0].high = 1.2; // √(1.2 GPa / 870 kg/m³) ≈ 1,174 m/s
    let r = fit::refused_bound(&template, &p).expect("1,500 m/s refused");
    assert_eq!((r.index, r.upper), (1, true));
    p[0].low = -100.0;
    let r = fit::refused_bound(&template, &p).expect("a negative modulus refused");
    assert_eq!((r.index, r.upper), (0, false));
    assert!(r.error.to_string().contains("bulk_modulus"), "{}", r.error);
}
