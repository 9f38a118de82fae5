//! Uncertainty bands against analytic cases.
//!
//! A pump that is an ideal flow source (no source volume) feeds a lossless
//! hose of length L = 1 m ending at a tank: seen from the pump the line is
//! closed at one end and open at the other, so its resonances sit at
//! f = (2m − 1)·c/4L (the quarter-wave line; Kinsler et al.,
//! *Fundamentals of Acoustics*, the closed–open pipe). Its first resonance
//! is c/4L, a linear function of the hose's wave speed c, so a tolerance on
//! c maps onto the resonance exactly: the band of f is the image of the
//! band of c.

use ripline::envelope::OperatingPoint;
use ripline::io::CircuitTemplate;
use ripline::io::quantity::Spread;
use ripline::uncertainty::bands::{BandRequest, Method, propagate, response_outputs};
use ripline::uncertainty::linear::coverage_factor;
use ripline::uncertainty::monte_carlo::Options;

fn quarter_wave(wave_speed: &str, model: &str) -> String {
    format!(
        "\
title: quarter-wave test line (invented)
fluid: {{density: 870 kg/m3, bulk_modulus: 1.6 GPa, viscosity: 32 cSt}}
line_model: {model}
pump:
  node: a
  speed: 1500 rpm
  pumping_elements: 9
  flow_ripple: [{{harmonic: 1, amplitude: 1 L/min}}]
  source_impedance: {{volume: 0 L}}
elements:
  - {{name: line, kind: hose, from: a, to: b, length: 1 m, bore: 25 mm, wave_speed: \"{wave_speed}\", loss_factor: 0}}
  - {{name: tank, kind: tank, at: b}}
taps:
  - {{name: pump outlet, node: a}}
"
    )
}

/// Frequencies from `lo` to `hi` Hz in 0.25 % steps.
fn grid(lo: f64, hi: f64) -> Vec<f64> {
    let n = ((hi / lo).ln() / 1.0025f64.ln()).ceil() as i32;
    (0..=n).map(|i| lo * 1.0025f64.powi(i)).collect()
}

/// Bands of the first resonance's frequency and level only (the response
/// on a grid around it finds it in each draw).
fn bands_of_resonance(
    text: &str,
    method: Method,
    options: Options,
) -> ripline::uncertainty::bands::Propagated {
    bands_of(text, method, options, &grid(250.0, 350.0), true)
}

fn bands_of(
    text: &str,
    method: Method,
    options: Options,
    freqs: &[f64],
    resonance_only: bool,
) -> ripline::uncertainty::bands::Propagated {
    let template = CircuitTemplate::new(text, "quarter.yaml").unwrap();
    let request = BandRequest {
        method,
        monte_carlo: options,
    };
    let evaluate = |c: ripline::Circuit| {
        let out = response_outputs(c, 0, freqs, &[300.0])?;
        Ok(if resonance_only {
            out[out.len() - 2..].to_vec()
        } else {
            out
        })
    };
    propagate(
        &template,
        &OperatingPoint::default(),
        &|_| {},
        &evaluate,
        &request,
        &mut |_, _| {},
    )
    .unwrap()
}

// c = 1200 m/s ± 5 %, rectangular: f = c/4L lies uniformly in 285 .. 315 Hz
// and its 90 % probabilistically symmetric interval is 300·(1 ∓ 0.045) =
// 286.5 .. 313.5 Hz. The Monte Carlo ends must match within their sampling
// error (the quantile of a uniform density 1/30 Hz⁻¹ from M draws has a
// standard deviation 30·√(0.05·0.95/M) Hz); 90 % of the draws lie inside by
// construction, and the interval is the analytic one, so the band covers
// the stated fraction of the analytic distribution.
#[test]
fn the_resonance_band_is_the_image_of_the_wave_speed_tolerance() {
    let r = bands_of_resonance(
        &quarter_wave("1200 m/s ± 5 %", "lossless"),
        Method::MonteCarlo,
        Options::default(),
    );
    assert_eq!(r.inputs.len(), 1);
    assert_eq!(r.inputs[0].spread, Spread::Limits);
    let f = r.outputs[0];
    assert!((f.nominal - 300.0).abs() < 1e-6, "{f:?}");
    let mc = f.monte_carlo.unwrap();
    let sd = 30.0 * (0.05f64 * 0.95 / r.draws as f64).sqrt();
    assert!((mc.low - 286.5).abs() < 4.0 * sd, "{mc:?} (sd {sd})");
    assert!((mc.high - 313.5).abs() < 4.0 * sd, "{mc:?} (sd {sd})");
    // u of a rectangular distribution of half-width 15 Hz: 15/√3
    assert!(
        (mc.u - 15.0 / 3f64.sqrt()).abs() < 0.05 * 15.0 / 3f64.sqrt(),
        "{mc:?}"
    );
    assert_eq!(mc.missing, 0);
    assert_eq!(r.stable, Some(true));
    // First order: f is linear in c, so u_c = u(c)/4L exactly and η = 0 …
    let lin = f.linear.unwrap();
    let u = 60.0 / 3f64.sqrt() / 4.0;
    assert!((lin.u - u).abs() < 1e-6 * u, "{lin:?}");
    assert!(lin.nonlinearity < 1e-6 && lin.good);
    // … but y ± k·u_c assumes a normal output: 300 ± 1.645·8.66 =
    // 285.75 .. 314.25 Hz, 0.75 Hz outside the true ends, more than the
    // Monte Carlo tolerance (u = 8.7 Hz to one digit: δ = 0.5 Hz), so JCGM
    // 101 §8's check says the linearised interval is not valid here.
    assert!((lin.high - (300.0 + coverage_factor(0.9) * u)).abs() < 1e-6);
    assert_eq!(f.linear_agrees, Some(false));
}

// With a standard uncertainty (normal) on c, f = c/4L is normal too and
// the first-order interval is exact: it must agree with Monte Carlo
// (JCGM 101 §8).
#[test]
fn linearised_bands_agree_with_monte_carlo_where_the_output_is_linear() {
    let r = bands_of_resonance(
        &quarter_wave("1200 m/s, u = 2 %", "lossless"),
        Method::MonteCarlo,
        Options::default(),
    );
    let f = r.outputs[0];
    let lin = f.linear.unwrap();
    assert!((lin.u - 6.0).abs() < 1e-6, "{lin:?}"); // 24 m/s / 4 m
    assert_eq!(f.linear_agrees, Some(true), "{f:?}");
    // the first-order method alone gives the same band without draws
    let l = bands_of_resonance(
        &quarter_wave("1200 m/s, u = 2 %", "lossless"),
        Method::Linear,
        Options::default(),
    );
    assert_eq!(l.draws, 0);
    let fl = l.outputs[0];
    assert!(fl.monte_carlo.is_none() && fl.linear_agrees.is_none());
    assert!((fl.linear.unwrap().u - 6.0).abs() < 1e-6);
}

// The response at a fixed frequency next to the resonance is far from
// linear in c (a ±5 % change of c sweeps the peak across it): the check
// must say the linearised band is not good there, while far below the
// resonance (100 Hz, a third of it, where the closed–open line's response
// goes as tan(πf/2f₀) and bends little) it is nearly linear in c.
#[test]
fn the_linearity_check_flags_a_response_next_to_its_resonance() {
    let freqs = grid(100.0, 350.0);
    let r = bands_of(
        &quarter_wave("1200 m/s ± 5 %", "laminar"),
        Method::Linear,
        Options::default(),
        &freqs,
        false,
    );
    let near = freqs.iter().position(|&f| f >= 300.0).unwrap();
    let at_near = r.outputs[near].linear.unwrap();
    let at_low = r.outputs[0].linear.unwrap();
    assert!(!at_near.good && at_near.nonlinearity > 0.5, "{at_near:?}");
    assert!(at_low.good, "{at_low:?}");
}
