//! Throughput of the per-frequency network solve (laminar line model).
//!
//! * `demo circuit`: the built-in demo (6 elements) at 10,000 frequencies,
//!   one core.
//! * `branched 30`: the 30-element generated branched circuit
//!   (`ripline::generated::branched_circuit`, an invented scenario: 24
//!   tubes in 4 bores, 5 side branches, an orifice, 2 load valves, 2
//!   volumes, a gas damper) at 10,000 frequencies: the sparse solve on 1
//!   and 2 threads (the frequencies spread by `parallel::ordered_map`, as
//!   `response` does), the sparse solve read in place on 1 thread
//!   (`Plan::solve_in_place` and one node's pressure: what `response`,
//!   `sweep` and `assess` run, without a `Solution`'s end flows), and the
//!   dense LU (`Plan::solve_dense`) beside it.
//! * `scaling`: generated branched circuits of 30 .. 30,000 elements, the
//!   sparse solve at enough frequencies for about 300,000 element·frequency
//!   evaluations each (the dense LU up to 300 elements at fewer
//!   frequencies, where it still finishes in seconds), and 1 against 2
//!   threads at 5,000 elements.
//!
//! Reported figure: element·frequency evaluations per second
//! = (elements × frequencies) / time. Figures: DEVELOPERS.md, "Benchmarks".

use criterion::{BenchmarkId, Criterion, Throughput, criterion_group, criterion_main};
use ripline::network::Plan;
use ripline::{C64, Circuit};
use std::hint::black_box;

/// Frequencies 1, 1.5, 2, … Hz.
fn freqs(count: usize) -> Vec<f64> {
    (0..count).map(|i| 1.0 + i as f64 * 0.5).collect()
}

/// Solves `circuit` at every frequency with a unit flow at the first pump,
/// on the current rayon pool (one thread: a plain loop), and sums one
/// pressure so nothing is optimised away.
fn sweep(plan: &Plan<'_>, freqs: &[f64], dense: bool, parallel: bool) -> f64 {
    sweep_with(plan, freqs, dense, parallel, false)
}

/// [`sweep`]; `in_place`: read the pressure from the workspace after
/// `Plan::solve_in_place`, as `response`, `sweep` and `assess` do, instead
/// of building every node's pressure and every element's end flows.
fn sweep_with(plan: &Plan<'_>, freqs: &[f64], dense: bool, parallel: bool, in_place: bool) -> f64 {
    let pump = plan.circuit().pumps[0].node;
    let flow = [(pump, C64::new(1e-5, 0.0))];
    let values = ripline::parallel::ordered_map(
        freqs,
        parallel,
        || plan.workspace(),
        |ws, &f| {
            if in_place {
                plan.solve_in_place(f, &flow, ws)?;
                return Ok(plan.node_pressure(ws, 0).re);
            }
            let s = if dense {
                plan.solve_dense(f, &flow, ws)
            } else {
                plan.solve(f, &flow, ws)
            }?;
            Ok::<f64, ripline::network::SolveError>(s.node_pressures[0].re)
        },
        &mut |_| {},
    )
    .unwrap();
    values.iter().sum()
}

/// A rayon pool of `threads` threads.
fn pool(threads: usize) -> rayon::ThreadPool {
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .unwrap()
}

fn branched(elements: usize) -> Circuit {
    let text = ripline::generated::branched_circuit(elements, 0);
    ripline::io::parse_circuit(&text, "generated.yaml").unwrap()
}

fn demo(c: &mut Criterion) {
    let circuit = ripline::io::parse_circuit(ripline::demo::DEMO_CIRCUIT, "demo").unwrap();
    let plan = Plan::compile(&circuit).unwrap();
    let f = freqs(10_000);
    let mut group = c.benchmark_group("demo circuit, 10k frequencies, laminar");
    group.throughput(Throughput::Elements(
        (circuit.elements.len() * f.len()) as u64,
    ));
    group.sample_size(20);
    group.bench_function("solve", |b| {
        b.iter(|| black_box(sweep(&plan, &f, false, false)));
    });
    group.finish();
}

fn branched_30(c: &mut Criterion) {
    let circuit = branched(30);
    let plan = Plan::compile(&circuit).unwrap();
    let f = freqs(10_000);
    let mut group = c.benchmark_group("branched 30, 10k frequencies");
    group.throughput(Throughput::Elements(
        (circuit.elements.len() * f.len()) as u64,
    ));
    group.sample_size(20);
    for threads in [1, 2] {
        let pool = pool(threads);
        group.bench_function(BenchmarkId::new("sparse, threads", threads), |b| {
            b.iter(|| pool.install(|| black_box(sweep(&plan, &f, false, true))));
        });
    }
    group.bench_function("sparse in place, 1 thread", |b| {
        b.iter(|| black_box(sweep_with(&plan, &f, false, false, true)));
    });
    group.bench_function("dense, 1 thread", |b| {
        b.iter(|| black_box(sweep(&plan, &f, true, false)));
    });
    group.finish();
}

fn scaling(c: &mut Criterion) {
    let mut group = c.benchmark_group("scaling, branched circuits");
    group.sample_size(10);
    for elements in [30, 100, 300, 1000, 5000, 30_000] {
        let circuit = branched(elements);
        let plan = Plan::compile(&circuit).unwrap();
        let f = freqs((300_000 / elements).max(10));
        group.throughput(Throughput::Elements((elements * f.len()) as u64));
        group.bench_function(BenchmarkId::new("sparse", elements), |b| {
            b.iter(|| black_box(sweep(&plan, &f, false, false)));
        });
        if elements <= 300 {
            // fewer frequencies: the dense LU costs (2 × elements)³
            let few = &f[..(3000 / elements).max(10)];
            group.throughput(Throughput::Elements((elements * few.len()) as u64));
            group.bench_function(BenchmarkId::new("dense", elements), |b| {
                b.iter(|| black_box(sweep(&plan, few, true, false)));
            });
            group.throughput(Throughput::Elements((elements * f.len()) as u64));
        }
        if elements == 5000 {
            let two = pool(2);
            group.bench_function(BenchmarkId::new("sparse, 2 threads", elements), |b| {
                b.iter(|| two.install(|| black_box(sweep(&plan, &f, false, true))));
            });
        }
    }
    group.finish();
}

criterion_group!(benches, demo, branched_30, scaling);
criterion_main!(benches);
