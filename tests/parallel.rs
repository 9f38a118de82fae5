//! Parallel evaluation gives the same results, bit for bit, as a serial run:
//! every frequency, speed and candidate design is solved on its own and
//! collected in order (`ripline::parallel`). Each analysis runs in a rayon
//! pool of one thread and in one of three, and the results must be equal
//! (`==` on every f64, no tolerance); the command line is compared byte for
//! byte with `--threads 1` and `--threads 3`.

use ripline::analysis::response::{frequency_response, log_grid};
use ripline::analysis::ripple::harmonic_ripple;
use ripline::analysis::sweep::{SweepSettings, sweep};
use ripline::network::Plan;
use ripline::source::shafts;
use std::process::Command;

fn in_pool<R: Send>(threads: usize, f: impl FnOnce() -> R + Send) -> R {
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .unwrap()
        .install(f)
}

fn generated(elements: usize, loops: usize) -> ripline::Circuit {
    let text = ripline::generated::branched_circuit(elements, loops);
    ripline::io::parse_circuit(&text, "generated.yaml").unwrap()
}

#[test]
fn frequency_response_is_identical_on_one_and_three_threads() {
    let circuit = generated(300, 6);
    let plan = Plan::compile(&circuit).unwrap();
    let grid = log_grid(1.0, 5000.0, 600);
    let run = || {
        let mut calls = 0;
        let r = frequency_response(&plan, 0, &grid, &mut |_| calls += 1).unwrap();
        (r, calls)
    };
    let (serial, serial_calls) = in_pool(1, run);
    let (parallel, parallel_calls) = in_pool(3, run);
    assert!(ripline::parallel::pays(plan.unknowns(), grid.len()));
    assert_eq!(serial, parallel);
    assert_eq!((serial_calls, parallel_calls), (grid.len(), grid.len()));
}

#[test]
fn harmonics_are_identical_on_one_and_three_threads() {
    let circuit = generated(3000, 20);
    let plan = Plan::compile(&circuit).unwrap();
    let run = || harmonic_ripple(&plan, 0, 20).unwrap();
    assert!(ripline::parallel::pays(plan.unknowns(), 20));
    assert_eq!(in_pool(1, run), in_pool(3, run));
}

#[test]
fn sweep_is_identical_on_one_and_three_threads() {
    // the engine example (invented) with its turbulent work line: a plan per
    // speed, so the per-worker scratch recompiles too
    let text = std::fs::read_to_string("networks/loader_engine_pumps.yaml").unwrap();
    for text in [
        text.clone(),
        text.replace("model: turbulent", "model: laminar"),
    ] {
        let circuit = ripline::io::parse_circuit(&text, "loader_engine_pumps.yaml").unwrap();
        let plan = Plan::compile(&circuit).unwrap();
        let shaft = shafts(&circuit.pumps).remove(0);
        let settings = SweepSettings {
            speeds_rev_s: (0..=400)
                .map(|i| (800.0 + 4.0 * f64::from(i)) / 60.0)
                .collect(),
            harmonics: circuit.harmonics,
            min_rise_db: 3.0,
        };
        let run = || sweep(&plan, &shaft, &settings, &mut |_| {}).unwrap();
        assert_eq!(in_pool(1, run), in_pool(3, run));
    }
}

fn ripline_with_threads(threads: &str, args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_ripline"))
        .args(args)
        .args(["--threads", threads])
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .output()
        .expect("the ripline binary runs")
}

/// `response` (its CSV and report) and `tune` (its report) print the same
/// bytes on one thread and on three.
#[test]
fn commands_print_the_same_bytes_on_one_and_three_threads() {
    let dir = std::env::temp_dir().join(format!("ripline-threads-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    let mut outputs = Vec::new();
    for threads in ["1", "3"] {
        let csv = dir.join(format!("response-{threads}.csv"));
        let o = ripline_with_threads(
            threads,
            &[
                "response",
                "networks/drill_rig_feed.yaml",
                "--points",
                "4000",
                "--csv",
                csv.to_str().unwrap(),
            ],
        );
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        let t = ripline_with_threads(
            threads,
            &[
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
            ],
        );
        assert!(t.status.success(), "{}", String::from_utf8_lossy(&t.stderr));
        outputs.push((o.stdout, std::fs::read(&csv).unwrap(), t.stdout));
    }
    assert!(
        outputs[0] == outputs[1],
        "outputs differ between 1 and 3 threads"
    );
    std::fs::remove_dir_all(&dir).unwrap();
}

/// `solve` reports every point's peak-to-peak from the shared-table search
/// (`waveform::Period`); it is the plain scan's value bit for bit
/// (`waveform::extremes_by_scan`, the search as it was) at every node of a
/// generated circuit without taps, here for 20 harmonics.
#[test]
fn solve_peak_to_peak_is_the_plain_scan_bit_for_bit() {
    let mut circuit = generated(300, 4);
    circuit.harmonics = 20;
    let plan = Plan::compile(&circuit).unwrap();
    let report = harmonic_ripple(&plan, 0, 20).unwrap();
    let request = ripline::results::solve::SolveRequest {
        harmonics: None,
        speed: None,
        db_ref_pa: (1e-6, ripline::results::Origin::Default),
        waveform: false,
    };
    let result =
        ripline::results::solve::solve(circuit.clone(), "generated.yaml", &request).unwrap();
    let points = &result.sources[0].points;
    assert_eq!(points.len(), report.taps.len());
    assert!(points.len() > 100);
    for (p, tap) in points.iter().zip(&report.taps) {
        let h: Vec<(u32, ripline::C64)> = tap
            .harmonics
            .iter()
            .map(|h| (h.order, h.pressure))
            .collect();
        let e = ripline::analysis::waveform::extremes_by_scan(&h);
        assert_eq!(
            p.peak_to_peak_pa.to_bits(),
            (e.max.1 - e.min.1).to_bits(),
            "{}",
            p.point
        );
    }
}
