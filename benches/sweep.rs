//! Speed of `ripline sweep`: the engine-driven example (an invented
//! scenario, networks/loader_engine_pumps.yaml) swept over 800..2400 rpm in
//! steps of 20 rpm with 6 harmonics of each pump (81 speeds × 11 orders of
//! the shaft fundamental), crossings refined, resonance scan excluded.
//!
//! Two cases: the example as it is, whose turbulent work line makes the
//! sweep split the mean flows and compile the circuit again at every speed;
//! and the same circuit with that line laminar, where one plan and one
//! workspace serve every solve.
//!
//! Reported figure: grid solves per second (speeds × orders / time), one
//! core.

use criterion::{Criterion, Throughput, criterion_group, criterion_main};
use ripline::analysis::sweep::{SweepSettings, sweep};
use ripline::network::Plan;
use ripline::source::shafts;
use std::hint::black_box;

const EXAMPLE: &str = include_str!("../networks/loader_engine_pumps.yaml");

fn engine_sweep(c: &mut Criterion) {
    let laminar = EXAMPLE.replace("model: turbulent", "model: laminar");
    let mut group = c.benchmark_group("engine example sweep, 81 speeds");
    for (name, text) in [
        ("plan per speed (turbulent line)", EXAMPLE),
        ("one plan (laminar)", &laminar),
    ] {
        let circuit = ripline::io::parse_circuit(text, "loader_engine_pumps.yaml").unwrap();
        let plan = Plan::compile(&circuit).unwrap();
        let shaft = shafts(&circuit.pumps).remove(0);
        let settings = SweepSettings {
            speeds_rev_s: (0..=80)
                .map(|i| (800.0 + 20.0 * f64::from(i)) / 60.0)
                .collect(),
            harmonics: circuit.harmonics,
            min_rise_db: 3.0,
        };
        let grid =
            settings.speeds_rev_s.len() * shaft.orders(&circuit.pumps, circuit.harmonics).len();
        group.throughput(Throughput::Elements(grid as u64));
        group.sample_size(20);
        group.bench_function(name, |b| {
            b.iter(|| {
                let r = sweep(&plan, &shaft, &settings, &mut |_| {}).unwrap();
                black_box(r.crossings.len())
            });
        });
    }
    group.finish();
}

criterion_group!(benches, engine_sweep);
criterion_main!(benches);
