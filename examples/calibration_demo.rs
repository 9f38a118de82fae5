//! Writes the synthetic "measured" records of the calibration demo
//! (an invented scenario, README "Measured against predicted, and
//! calibration"): the ripple the "true" circuit
//! `networks/calibration/log_loader_true.yaml` makes at the taps of each
//! run of `networks/calibration/commissioning.yaml`, plus white noise of
//! 2 % of each tap's rms ripple, 0.5 s at 6 kHz, written in bar.
//!
//! ```sh
//! cargo run --example calibration_demo
//! ```

use ripline::calibrate::measured::{RecordSynthesis, synthesize_run};
use ripline::estimate::bench::DataFile;
use ripline::io::measurement_file::load_measurements;
use ripline::io::records::write_time_record;
use ripline::io::{CircuitTemplate, load_circuit_file};
use std::path::Path;

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("networks/calibration");
    let truth_path = dir.join("log_loader_true.yaml");
    let truth = load_circuit_file(&truth_path)?;
    let template = CircuitTemplate::new(&truth.text, &truth.file)?;
    let m = load_measurements(&dir.join("commissioning.yaml"), &truth)?;
    for (i, run) in m.runs.iter().enumerate() {
        let synthesis = RecordSynthesis {
            sample_rate_hz: 6000.0,
            duration_s: 0.5,
            noise: 0.02,
            seed: 2026 + i as u64,
        };
        let channels = synthesize_run(&template, &m, run, &[], &synthesis)?;
        let DataFile::TimeSeries { path, columns, .. } = &run.data else {
            return Err("the demo's runs are time-series records".into());
        };
        let mut text = Vec::new();
        let comment = format!(
            "synthetic record of run `{}` at {} rpm from log_loader_true.yaml (an invented scenario), 2 % noise, seed {}",
            run.name,
            run.speed_rev_s * 60.0,
            synthesis.seed
        );
        write_time_record(
            &mut text,
            &comment,
            None,
            columns,
            &channels,
            synthesis.sample_rate_hz,
            1e5,
            false,
            None,
        )?;
        std::fs::write(path, text)?;
        println!("wrote {}", path.display());
    }
    Ok(())
}
