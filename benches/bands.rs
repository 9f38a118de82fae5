//! Speed of uncertainty bands (issue 13's target: 1,000-draw bands on a
//! 30-element circuit at 10 harmonics over 100 speeds in under 2 s on 2
//! cores).
//!
//! The circuit is `generated::branched_circuit(30, 1)` (an invented
//! scenario: a trunk with side branches, a pulsation damper at the pump,
//! 10 harmonics), with three tolerances written into it: the oil's bulk
//! modulus ± 5 %, the damper's gas volume ± 10 % and the first harmonic of
//! the source flow ± 10 %. Each draw writes the drawn values into the
//! circuit file as read, resolves the circuit and sweeps 100 speeds
//! (1000..2485 rpm) with the true worst speed of every measurement point
//! refined, as `sweep --bands` does; 1,000 draws (`--draws 1000`) plus the
//! 2n + 1 = 7 first-order evaluations. Draws run on rayon's pool (all
//! cores unless `RAYON_NUM_THREADS` says otherwise).

use criterion::{Criterion, criterion_group, criterion_main};
use ripline::envelope::OperatingPoint;
use ripline::io::CircuitTemplate;
use ripline::source::shafts;
use ripline::uncertainty::bands::{BandRequest, Method, propagate, sweep_outputs};
use ripline::uncertainty::monte_carlo::Options;
use std::hint::black_box;

fn sweep_bands(c: &mut Criterion) {
    let text = ripline::generated::branched_circuit(30, 1)
        .replace("bulk_modulus: 1.6 GPa", "bulk_modulus: \"1.6 GPa ± 5 %\"")
        .replace("gas_volume: 0.3 L", "gas_volume: \"0.3 L ± 10 %\"")
        .replace(
            "{harmonic: 1, amplitude: 2.0000 L/min,",
            "{harmonic: 1, amplitude: \"2.0000 L/min ± 10 %\",",
        );
    let template = CircuitTemplate::new(&text, "generated.yaml").unwrap();
    let circuit = ripline::io::parse_circuit(&text, "generated.yaml").unwrap();
    assert_eq!(circuit.elements.len(), 30);
    assert_eq!(circuit.harmonics, 10);
    let shaft = shafts(&circuit.pumps).remove(0);
    let speeds: Vec<f64> = (0..100)
        .map(|i| (1000.0 + 15.0 * f64::from(i)) / 60.0)
        .collect();
    let points = ripline::analysis::ripple::report_points(&circuit).len();
    let evaluate = |c: ripline::Circuit| sweep_outputs(c, &shaft, &speeds, 10);
    let request = BandRequest {
        method: Method::MonteCarlo,
        monte_carlo: Options {
            draws: Some(1000),
            ..Options::default()
        },
    };
    let run = || {
        propagate(
            &template,
            &OperatingPoint::default(),
            &|_| {},
            &evaluate,
            Some(points * 100..points * 102),
            &request,
            &mut |_, _| {},
        )
        .unwrap()
    };
    assert_eq!(run().info.inputs.len(), 3);
    let mut group = c.benchmark_group("bands");
    group.sample_size(10);
    group.bench_function(
        "sweep bands, 30 elements, 10 harmonics, 100 speeds, 1000 draws",
        |b| {
            b.iter(|| black_box(run().info.draws));
        },
    );
    group.finish();
}

criterion_group!(benches, sweep_bands);
criterion_main!(benches);
