//! Speed of `ripline fit`: the whole estimation of a bench from its records,
//! per condition (target: under 0.5 s per condition in release).
//!
//! Cases (invented scenarios):
//! * the demo bench (networks/bench/demo_bench.yaml): two systems, three
//!   transducers, 0.5 s records at 6 kHz, speed of sound in situ, 10
//!   harmonics — extraction of both records and the fit with 200 Monte
//!   Carlo draws;
//! * the secondary-source statistics bench
//!   (tests/data/stats/secondary_capacitance.yaml): 1 s records at 6 kHz,
//!   the secondary condition holding 16 secondary lines besides the pump
//!   harmonics — the same, from synthetic records made in memory.
//!
//! Reported: time per bench; divide by its two conditions.

use criterion::{Criterion, criterion_group, criterion_main};
use ripline::estimate::fit::{FitOptions, fit};
use ripline::estimate::rng::Rng;
use ripline::estimate::{Quiet, selfcheck};
use std::hint::black_box;
use std::path::Path;

fn fit_benches(c: &mut Criterion) {
    let mut group = c.benchmark_group("fit, two conditions");
    group.sample_size(10);
    let demo = ripline::io::bench_file::load_bench(Path::new("networks/bench/demo_bench.yaml"))
        .expect("the demo bench");
    group.bench_function("demo bench: read, extract, fit (200 draws)", |b| {
        b.iter(|| {
            let data = ripline::io::records::load_conditions(&demo, &mut Quiet).unwrap();
            black_box(fit(&demo, &data, &FitOptions::default(), &mut Quiet).unwrap())
        })
    });
    let secondary = ripline::io::bench_file::load_bench(Path::new(
        "tests/data/stats/secondary_capacitance.yaml",
    ))
    .expect("the secondary-source bench");
    let syn = secondary.synthesis.clone().unwrap();
    group.bench_function("secondary source: extract, fit (200 draws)", |b| {
        b.iter(|| {
            let data = selfcheck::synthetic_spectra(&secondary, &syn, &mut Rng::new(3)).unwrap();
            black_box(fit(&secondary, &data, &FitOptions::default(), &mut Quiet).unwrap())
        })
    });
    group.finish();
}

criterion_group!(benches, fit_benches);
criterion_main!(benches);
