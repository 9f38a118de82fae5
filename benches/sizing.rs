//! Run time of the resonance check and of silencer sizing on the demo
//! circuits (networks/drill_rig_feed*.yaml, invented scenarios):
//!
//! * `response`: the frequency response of networks/drill_rig_feed.yaml on
//!   its default grid (30–3600 Hz, 2398 log-spaced frequencies), then the
//!   resonance search with its refinements;
//! * `tune`: sizing the damper of networks/drill_rig_feed_damper.yaml by its
//!   gas volume and neck length (2 parameters, default search: 600 Halton
//!   samples and three Nelder–Mead refinements) for the worst ripple at the
//!   head block over 41 speeds;
//! * `objective`: one evaluation of that objective on the file's design:
//!   the true worst speed (the 41 log-spaced speeds, then every resonance
//!   crossing refined, `analysis::worst`) against the 41 speeds alone (what
//!   the objective was before; timed as the rms objective, which solves the
//!   same grid and refines nothing).

use criterion::{Criterion, criterion_group, criterion_main};
use ripline::analysis::response::{
    PeakSettings, default_points, find_resonances, frequency_response, log_grid,
};
use ripline::analysis::tune::{
    Bound, Objective, Parameter, RippleEvaluator, SearchSettings, TuneProblem, speed_conditions,
};
use ripline::network::Plan;
use std::hint::black_box;

const FEED: &str = include_str!("../networks/drill_rig_feed.yaml");
const FEED_DAMPER: &str = include_str!("../networks/drill_rig_feed_damper.yaml");

fn response(c: &mut Criterion) {
    let circuit = ripline::io::parse_circuit(FEED, "feed").unwrap();
    let plan = Plan::compile(&circuit).unwrap();
    let freqs = log_grid(30.0, 3600.0, default_points(30.0, 3600.0));
    let mut group = c.benchmark_group("drill rig feed");
    group.sample_size(20);
    group.bench_function("response + resonances", |b| {
        b.iter(|| {
            let r = frequency_response(&plan, 0, &freqs, &mut |_| {}).unwrap();
            black_box(find_resonances(&plan, 0, &r, PeakSettings::default()).unwrap())
        });
    });
    group.finish();
}

fn tune(c: &mut Criterion) {
    let circuit = ripline::io::parse_circuit(FEED_DAMPER, "feed damper").unwrap();
    let element = circuit.element_id("damper").unwrap();
    let tap = circuit.taps[1].location;
    let speeds = circuit.pumps[0].speed_range_rev_s.unwrap();
    let conditions = speed_conditions(speeds, 41);
    let problem = TuneProblem {
        circuit: &circuit,
        element,
        bounds: vec![
            Bound {
                parameter: Parameter::GasVolume,
                low: 0.05e-3,
                high: 2e-3,
            },
            Bound {
                parameter: Parameter::NeckLength,
                low: 0.03,
                high: 0.3,
            },
        ],
        evaluator: RippleEvaluator::new(&circuit, 0, tap, &conditions, Objective::Worst),
        fluid_states: Vec::new(),
    };
    let mut group = c.benchmark_group("drill rig feed damper");
    group.sample_size(10);
    group.bench_function("tune gas volume and neck length", |b| {
        b.iter(|| {
            black_box(
                problem
                    .solve(SearchSettings::for_dims(2), &mut |_| {})
                    .unwrap(),
            )
        });
    });
    group.finish();
}

fn objective(c: &mut Criterion) {
    let circuit = ripline::io::parse_circuit(FEED_DAMPER, "feed damper").unwrap();
    let tap = circuit.taps[1].location;
    let speeds = circuit.pumps[0].speed_range_rev_s.unwrap();
    let conditions = speed_conditions(speeds, 41);
    let mut group = c.benchmark_group("drill rig feed damper objective");
    group.sample_size(30);
    for (name, objective) in [
        ("true worst speed (refined)", Objective::Worst),
        ("41-speed grid alone", Objective::Rms),
    ] {
        let evaluator = RippleEvaluator::new(&circuit, 0, tap, &conditions, objective);
        group.bench_function(name, |b| {
            b.iter(|| black_box(evaluator.evaluate(&circuit).unwrap()));
        });
    }
    group.finish();
}

criterion_group!(benches, response, tune, objective);
criterion_main!(benches);
