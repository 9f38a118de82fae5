//! Throughput of the per-frequency network solve: the demo circuit at 10,000
//! frequencies with the laminar line model.
//!
//! Reported figure: element·frequency evaluations per second
//! = (elements × frequencies) / time, on one core.

use criterion::{Criterion, Throughput, criterion_group, criterion_main};
use ripline::C64;
use ripline::network::Plan;
use std::hint::black_box;

fn demo_sweep(c: &mut Criterion) {
    let circuit = ripline::io::parse_circuit(ripline::demo::DEMO_CIRCUIT, "demo").unwrap();
    let plan = Plan::compile(&circuit).unwrap();
    let pump = circuit.pumps[0].node;
    let freqs: Vec<f64> = (0..10_000).map(|i| 1.0 + i as f64 * 0.5).collect();
    let evaluations = (circuit.elements.len() * freqs.len()) as u64;
    let mut group = c.benchmark_group("demo circuit, 10k frequencies, laminar");
    group.throughput(Throughput::Elements(evaluations));
    group.sample_size(20);
    group.bench_function("solve", |b| {
        let mut ws = plan.workspace();
        b.iter(|| {
            let mut acc = 0.0;
            for &f in &freqs {
                let sol = plan
                    .solve(f, &[(pump, C64::new(1e-5, 0.0))], &mut ws)
                    .unwrap();
                acc += sol.node_pressures[0].re;
            }
            black_box(acc)
        });
    });
    group.finish();
}

criterion_group!(benches, demo_sweep);
criterion_main!(benches);
