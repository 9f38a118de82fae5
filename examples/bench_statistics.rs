//! The statistics of bench estimation over many seeds, per method: bias,
//! spread over the reported σ, coverage of ±1σ and ±2σ, for the benches in
//! tests/data/stats/ (invented scenarios) at their stated noise.
//!
//! `cargo run --example bench_statistics -- SEEDS [DRAWS] [BENCH.yaml ...]`

use ripline::estimate::Quiet;
use ripline::estimate::fit::FitOptions;
use ripline::estimate::selfcheck::{self, QuantityCheck, SelfCheckOptions};
use std::time::Instant;

fn row(name: &str, q: &QuantityCheck) -> String {
    format!(
        "{name:>5} bias {:+9.2e} ({:+5.1} SE)  spread/σ {:5.2}  1σ {:5.1} %  2σ {:5.1} %",
        q.bias,
        q.bias_standard_errors,
        q.spread_over_sigma,
        100.0 * q.coverage_1,
        100.0 * q.coverage_2
    )
}

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let seeds: usize = args.first().and_then(|a| a.parse().ok()).unwrap_or(20);
    let draws: usize = args.get(1).and_then(|a| a.parse().ok()).unwrap_or(200);
    let files: Vec<String> = if args.len() > 2 {
        args[2..].to_vec()
    } else {
        [
            "two_systems",
            "secondary_interpolate",
            "secondary_capacitance",
        ]
        .iter()
        .map(|n| format!("tests/data/stats/{n}.yaml"))
        .collect()
    };
    for file in files {
        let bench = ripline::io::bench_file::load_bench(std::path::Path::new(&file))
            .unwrap_or_else(|e| panic!("{e}"));
        let start = Instant::now();
        let r = selfcheck::run(
            &bench,
            &SelfCheckOptions {
                seeds,
                first_seed: 1,
                fit: FitOptions {
                    draws,
                    ..FitOptions::default()
                },
            },
            &mut Quiet,
        )
        .unwrap_or_else(|e| panic!("{file}: {e}"));
        println!(
            "{file}: {} seeds ({} failed), {} draws, noise {}, {:.1} s; noise-free errors Qs {:.1e}, Zs {:.1e}",
            r.seeds,
            r.failed_seeds,
            r.draws,
            r.noise,
            start.elapsed().as_secs_f64(),
            r.noise_free_error.0,
            r.noise_free_error.1
        );
        for h in &r.harmonics {
            println!(
                "  k = {} ({:.1} Hz), {}",
                h.order,
                h.freq_hz,
                h.status.key()
            );
            println!("    {}", row("|Qs|", &h.flow_amplitude));
            println!("    {}", row("∠Qs", &h.flow_phase));
            println!("    {}", row("|Zs|", &h.impedance_amplitude));
            println!("    {}", row("∠Zs", &h.impedance_phase));
        }
    }
}
