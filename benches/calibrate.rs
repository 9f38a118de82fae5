//! Speed of `ripline calibrate` against issue 13's target: 3 parameters
//! against 3 taps × 10 harmonics × 5 operating points in under 1 s.
//!
//! The demo's log loader (an invented scenario,
//! networks/calibration/log_loader.yaml, starting from its catalogue
//! values) is calibrated against spectra of the "true" circuit
//! (log_loader_true.yaml) at 5 speeds from 1100 to 1900 rpm, 10 harmonics
//! at the 3 taps, with 1 % complex noise (seeded). The measured harmonics
//! are read once outside the timing; the figure is the calibration itself
//! (Levenberg–Marquardt, covariance, identifiability).

use criterion::{Criterion, criterion_group, criterion_main};
use ripline::calibrate::fit::{Parameter, calibrate};
use ripline::calibrate::lm::Options;
use ripline::calibrate::measured::{Model, read_measured, ripple_at_taps};
use ripline::estimate::Quiet;
use ripline::estimate::rng::Rng;
use ripline::io::measurement_file::parse_measurements;
use ripline::io::{CircuitTemplate, parse_circuit_file};
use std::hint::black_box;

const MODEL: &str = include_str!("../networks/calibration/log_loader.yaml");
const TRUTH: &str = include_str!("../networks/calibration/log_loader_true.yaml");
const SPEEDS: [f64; 5] = [1100.0, 1300.0, 1500.0, 1700.0, 1900.0];

fn calibration(c: &mut Criterion) {
    let dir = std::env::temp_dir().join(format!("ripline-bench-calibrate-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let model = MODEL.replace("harmonics: 6", "harmonics: 10");
    let truth = TRUTH.replace("harmonics: 6", "harmonics: 10");
    let file = dir.join("model.yaml").display().to_string();
    let circuit = parse_circuit_file(&model, &file).unwrap();
    let template = CircuitTemplate::new(&model, &file).unwrap();
    let true_template = CircuitTemplate::new(&truth, "truth.yaml").unwrap();
    let mut text = String::from("title: bench runs (invented)\nharmonics: 10\nruns:\n");
    for (i, s) in SPEEDS.iter().enumerate() {
        text.push_str(&format!(
            "  - {{name: run {i}, speed: {s} rpm, spectra: run{i}.csv, unit: Pa, taps: [pump outlet, bulkhead, valve block]}}\n"
        ));
    }
    let m_file = dir.join("measured.yaml");
    std::fs::write(&m_file, &text).unwrap();
    let m = parse_measurements(&text, &m_file.display().to_string(), &circuit).unwrap();
    let mut rng = Rng::new(13);
    let orders: Vec<u32> = (1..=10).collect();
    for run in &m.runs {
        let p = ripple_at_taps(&true_template, &m, run, run.speed_rev_s, &orders, &[]).unwrap();
        let f1 = run.speed_rev_s * 9.0;
        let taps = ["pump outlet", "bulkhead", "valve block"];
        let mut csv = String::from("harmonic,frequency_hz");
        for t in taps {
            csv.push_str(&format!(",{t}_re,{t}_im,{t}_u"));
        }
        csv.push('\n');
        for (k, h) in orders.iter().zip(&p) {
            csv.push_str(&format!("{k},{:?}", f64::from(*k) * f1));
            for v in h {
                let u = 0.01 * v.norm().max(1.0);
                let noisy = v + rng.complex_normal() * u;
                csv.push_str(&format!(",{:?},{:?},{u:?}", noisy.re, noisy.im));
            }
            csv.push('\n');
        }
        std::fs::write(run.data.path(), csv).unwrap();
    }
    let measured = read_measured(&m, &circuit, &mut Quiet).unwrap();
    let parameters: Vec<Parameter> = [
        ("fluid.bulk_modulus", 1.0, 2.5),
        ("boom hose.wave_speed", 600.0, 1500.0),
        ("pump.source_impedance.volume", 0.02, 1.0),
    ]
    .into_iter()
    .map(|(t, low, high)| Parameter {
        target: template.target(t).unwrap(),
        low,
        high,
    })
    .collect();
    let model = Model {
        template: &template,
        measurements: &m,
        measured: &measured,
    };
    let mut group = c.benchmark_group("calibration");
    group.sample_size(10);
    group.bench_function("3 parameters, 3 taps x 10 harmonics x 5 speeds", |b| {
        b.iter(|| {
            black_box(calibrate(&model, &measured, &parameters, &Options::default()).unwrap())
        });
    });
    group.finish();
    let _ = std::fs::remove_dir_all(dir);
}

criterion_group!(benches, calibration);
criterion_main!(benches);
