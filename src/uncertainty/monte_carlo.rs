//! Propagation of distributions by Monte Carlo (JCGM 101:2008, Supplement 1
//! to the GUM).
//!
//! Draw i takes its random numbers from its own generator, seeded from the
//! seed and i, so a seed gives the same bands however the draws are
//! scheduled. For each output quantity the result is its estimate (the mean
//! of the draws), its standard uncertainty (their standard deviation) and
//! the probabilistically symmetric coverage interval: the (1 − p)/2 and
//! (1 + p)/2 quantiles of the draws (JCGM 101 §7.7).
//!
//! **Adaptive number of draws (JCGM 101 §7.9).** Draws are made in batches
//! of J = ⌈100/(1 − p)⌉ (1000 for p = 90 %). The standard's procedure takes
//! batches of max(J, 10⁴); here each draw is a whole circuit evaluation, so
//! batches of J are used and their number grows instead, which the same
//! stability test governs. After each batch from the second on, for every output the
//! estimate, the standard uncertainty and both interval ends are computed
//! per batch; their standard deviations over the h batches, divided by √h,
//! must each be at most half the numerical tolerance δ: with u written to
//! `digits` significant digits as c·10^l, δ = ½·10^l. Until then another
//! batch is drawn, up to a cap; a result stopped at the cap says it is not
//! stable.
//!
//! **Which outputs decide.** JCGM 101 §7.9 stabilises the output
//! quantities of the measurement model. A command computes many more
//! values than it concludes on (a sweep's rms at every grid speed, a
//! response at every frequency): near a resonance the band at one grid
//! speed is wide and bimodal (the resonance passes that speed in some
//! draws and not in others) and needs far more draws to settle than the
//! conclusions do. So the caller names the *judged* outputs (a sweep's worst
//! speed and worst level per point, a response's resonances): only they
//! decide when to stop; the others are reported from the same draws.
//!
//! Draws are evaluated in parallel on rayon's pool; each has its own
//! generator, so the bands are the same on any number of threads.

use super::stats::quantile;
use crate::estimate::rng::Rng;
use rayon::prelude::*;
use serde::Serialize;

/// Most values kept in memory over all outputs and draws (as 32-bit
/// floats: 120 MB).
pub const MAX_STORED: usize = 30_000_000;
/// Most draws by default.
pub const DEFAULT_MAX_DRAWS: usize = 20_000;
/// Most draws allowed.
pub const MAX_DRAWS: usize = 200_000;

/// Settings of a Monte Carlo propagation.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Options {
    /// Coverage probability p of the intervals (e.g. 0.9).
    pub coverage: f64,
    /// Seed of the draws.
    pub seed: u64,
    /// A fixed number of draws (no adaptive stopping), or `None`.
    pub draws: Option<usize>,
    /// The cap of the adaptive procedure.
    pub max_draws: usize,
    /// Significant digits of u regarded as meaningful (n_dig).
    pub digits: u32,
}

impl Default for Options {
    fn default() -> Self {
        Options {
            coverage: 0.9,
            seed: 1,
            draws: None,
            max_draws: DEFAULT_MAX_DRAWS,
            digits: 1,
        }
    }
}

impl Options {
    /// The batch size J = ⌈100/(1 − p)⌉.
    pub fn batch(&self) -> usize {
        (100.0 / (1.0 - self.coverage) - 1e-9).ceil() as usize
    }
}

/// The band of one output quantity.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Band {
    /// The value with every input at its nominal value.
    pub nominal: f64,
    /// The mean of the draws (the Monte Carlo estimate).
    pub mean: f64,
    /// Their standard deviation (the standard uncertainty).
    pub u: f64,
    /// The low end of the coverage interval.
    pub low: f64,
    /// The high end.
    pub high: f64,
    /// Draws in which the quantity does not exist (e.g. a resonance that a
    /// draw does not show), left out of the statistics.
    pub missing: usize,
}

/// Monte Carlo bands of every output.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Bands {
    /// Draws made.
    pub draws: usize,
    /// Batches of them.
    pub batches: usize,
    /// Whether the adaptive procedure found every band stable (`None` with
    /// a fixed number of draws).
    pub stable: Option<bool>,
    /// The settings.
    pub options: Options,
    /// One band per output.
    pub bands: Vec<Band>,
    /// The draws of each judged output (f32, in draw order; NaN where a
    /// draw lacks the quantity), for statistics beyond the band: where a
    /// sweep's worst speed lies over the draws
    /// ([`super::stats::places`]).
    #[serde(skip)]
    pub judged_samples: Vec<Vec<f32>>,
}

/// The generator of draw `i` under `seed`.
pub fn draw_rng(seed: u64, i: usize) -> Rng {
    Rng::new(seed ^ (i as u64).wrapping_mul(0xD1B5_4A32_D192_ED03))
}

/// Why a propagation cannot run.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum LimitError {
    /// Too many outputs for two batches in memory.
    #[error(
        "{outputs} output values × {draws} draws is more than ripline keeps in memory ({MAX_STORED} values): ask for fewer points, speeds or frequencies, or fewer draws"
    )]
    TooMany {
        /// Outputs.
        outputs: usize,
        /// Draws it would need.
        draws: usize,
    },
}

/// Runs the propagation: `eval(i)` gives the outputs of draw i (NaN for a
/// quantity a draw does not have). The outputs in `judged` (all when
/// `None`) decide when the adaptive procedure stops. `progress(done,
/// planned)` is called after each batch.
///
/// # Errors
/// The first error of `eval` in draw order, or a [`LimitError`] wrapped by
/// `limit` when the outputs do not fit in memory.
pub fn propagate<E: Send>(
    nominal: &[f64],
    eval: &(dyn Fn(usize) -> Result<Vec<f64>, E> + Sync),
    options: &Options,
    judged: Option<std::ops::Range<usize>>,
    limit: impl Fn(LimitError) -> E,
    progress: &mut dyn FnMut(usize, usize),
) -> Result<Bands, E> {
    let outputs = nominal.len();
    let judged = judged.map_or(0..outputs, |r| r.start.min(outputs)..r.end.min(outputs));
    let batch = options.draws.unwrap_or_else(|| options.batch()).max(2);
    let cap = match options.draws {
        Some(n) => n,
        None => options.max_draws.max(2 * batch) / batch * batch,
    };
    let planned_min = if options.draws.is_some() {
        cap
    } else {
        2 * batch
    };
    if outputs.saturating_mul(planned_min) > MAX_STORED {
        return Err(limit(LimitError::TooMany {
            outputs,
            draws: planned_min,
        }));
    }
    let cap = cap
        .min(MAX_STORED / outputs.max(1) / batch * batch)
        .max(planned_min);
    let mut values: Vec<Vec<f32>> = vec![Vec::new(); outputs];
    // per batch: (mean, u, low, high) of every output
    let mut per_batch: Vec<Vec<[f64; 4]>> = Vec::new();
    let mut stable = None;
    let mut done = 0;
    while done < cap {
        let n = batch.min(cap - done);
        let start = done;
        let rows = evaluate(start, n, eval)?;
        for row in &rows {
            for (o, v) in row.iter().enumerate().take(outputs) {
                values[o].push(*v as f32);
            }
        }
        done += n;
        progress(done, cap);
        if options.draws.is_some() {
            continue;
        }
        per_batch.push(
            judged
                .clone()
                .map(|o| {
                    let s = summary(&values[o][start..], options.coverage);
                    [s.0, s.1, s.2, s.3]
                })
                .collect(),
        );
        if per_batch.len() < 2 {
            continue;
        }
        let ok = judged.clone().enumerate().all(|(j, o)| {
            let all = summary(&values[o], options.coverage);
            stable_output(&per_batch, j, all.1, options.digits)
        });
        stable = Some(ok);
        if ok {
            break;
        }
    }
    // each output's summary on its own, in parallel (in order)
    let bands = (0..outputs)
        .into_par_iter()
        .map(|o| {
            let (mean, u, low, high, missing) = summary_with_missing(&values[o], options.coverage);
            Band {
                nominal: nominal[o],
                mean: f32_digits(mean),
                u: f32_digits(u),
                low: f32_digits(low),
                high: f32_digits(high),
                missing,
            }
        })
        .collect();
    Ok(Bands {
        draws: done,
        batches: per_batch.len().max(1),
        stable,
        options: *options,
        bands,
        judged_samples: values.drain(judged).collect(),
    })
}

/// The outputs of draws `start .. start + n`, in order (evaluated on
/// rayon's pool; the first error in draw order).
fn evaluate<E: Send>(
    start: usize,
    n: usize,
    eval: &(dyn Fn(usize) -> Result<Vec<f64>, E> + Sync),
) -> Result<Vec<Vec<f64>>, E> {
    let draws: Vec<usize> = (start..start + n).collect();
    crate::parallel::ordered_map(&draws, true, || (), |_, &i| eval(i), &mut |_| {})
}

/// Whether the `j`-th judged output is stable over the batches (JCGM 101
/// §7.9.4).
fn stable_output(per_batch: &[Vec<[f64; 4]>], o: usize, u: f64, digits: u32) -> bool {
    if !(u.is_finite() && u > 0.0) {
        return true; // no spread: nothing to stabilise
    }
    let l = u.log10().floor() as i32 - (digits as i32 - 1);
    let delta = 0.5 * 10f64.powi(l);
    let h = per_batch.len() as f64;
    (0..4).all(|q| {
        let xs: Vec<f64> = per_batch
            .iter()
            .map(|b| b[o][q])
            .filter(|v| v.is_finite())
            .collect();
        if xs.len() < 2 {
            return true;
        }
        let mean = xs.iter().sum::<f64>() / xs.len() as f64;
        let var = xs.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (h * (h - 1.0));
        2.0 * var.sqrt() <= delta
    })
}

/// `x` to the digits its 32-bit samples carry: the shortest decimal that
/// reads back as the same `f32` (286.34705, not 286.3470458984375).
pub(crate) fn f32_digits(x: f64) -> f64 {
    if !x.is_finite() {
        return x;
    }
    format!("{}", x as f32).parse().unwrap_or(x)
}

/// (mean, u, low, high) of samples, NaNs left out.
fn summary(samples: &[f32], coverage: f64) -> (f64, f64, f64, f64) {
    let s = summary_with_missing(samples, coverage);
    (s.0, s.1, s.2, s.3)
}

fn summary_with_missing(samples: &[f32], coverage: f64) -> (f64, f64, f64, f64, usize) {
    let mut v = super::stats::finite_samples(samples);
    let missing = samples.len() - v.len();
    if v.is_empty() {
        return (f64::NAN, f64::NAN, f64::NAN, f64::NAN, missing);
    }
    let n = v.len() as f64;
    let mean = v.iter().sum::<f64>() / n;
    let u = if v.len() > 1 {
        (v.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt()
    } else {
        0.0
    };
    let low = quantile(&mut v, (1.0 - coverage) / 2.0);
    let high = quantile(&mut v, (1.0 + coverage) / 2.0);
    (mean, u, low, high, missing)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    // the expected values are numpy's shortest repr of `np.float32(x)`
    fn band_ends_keep_the_digits_of_their_samples() {
        assert_eq!(f32_digits(286.347_045_898_437_5), 286.347_05);
        assert_eq!(f32_digits(34_104.331_445_312_5), 34_104.332);
        assert!(f32_digits(f64::NAN).is_nan());
    }

    // y = x with x uniform on [-1, 1]: u = 1/√3, and the 90 % interval is
    // [-0.9, 0.9] (the rectangular distribution's quantiles, by hand). The
    // adaptive procedure must stop with every band stable.
    #[test]
    fn a_rectangular_input_gives_its_own_quantiles() {
        let eval = |i: usize| -> Result<Vec<f64>, ()> {
            let mut rng = draw_rng(7, i);
            let x = 2.0 * rng.uniform() - 1.0;
            Ok(vec![x, 3.0 * x + 1.0])
        };
        let options = Options::default();
        let bands = propagate(&[0.0, 1.0], &eval, &options, None, |_| (), &mut |_, _| {}).unwrap();
        assert_eq!(bands.stable, Some(true));
        assert!(
            bands.draws >= 2000 && bands.draws % 1000 == 0,
            "{}",
            bands.draws
        );
        let b = bands.bands[0];
        let m = bands.draws as f64;
        // sampling limits: u to about 4/√(2M) relative, the ends to about
        // 4·√(p(1-p)/M)/density
        assert!(
            (b.u - 1.0 / 3f64.sqrt()).abs() < 4.0 * b.u / (2.0 * m).sqrt(),
            "{b:?}"
        );
        let end = 4.0 * (0.05f64 * 0.95 / m).sqrt() / 0.5;
        assert!(
            (b.low + 0.9).abs() < end && (b.high - 0.9).abs() < end,
            "{b:?}"
        );
        let b2 = bands.bands[1];
        assert!((b2.low - (1.0 - 2.7)).abs() < 3.0 * end && (b2.high - 3.7).abs() < 3.0 * end);
    }

    // Output 1 is Cauchy distributed (the ratio of two independent normals;
    // no variance, so its standard deviation never settles, JCGM 101 §7.9
    // cannot stabilise it), output 0 uniform. Judged on output 0 alone the
    // procedure stops when output 0 is stable; judged on both it runs to
    // the cap and says it is not stable.
    #[test]
    fn only_the_judged_outputs_decide_when_to_stop() {
        let eval = |i: usize| -> Result<Vec<f64>, ()> {
            let mut rng = draw_rng(11, i);
            let x = 2.0 * rng.uniform() - 1.0;
            Ok(vec![x, rng.normal() / rng.normal()])
        };
        let options = Options {
            max_draws: 8000,
            ..Options::default()
        };
        let all = propagate(&[0.0, 0.0], &eval, &options, None, |_| (), &mut |_, _| {}).unwrap();
        assert_eq!((all.draws, all.stable), (8000, Some(false)));
        let judged = propagate(
            &[0.0, 0.0],
            &eval,
            &options,
            Some(0..1),
            |_| (),
            &mut |_, _| {},
        )
        .unwrap();
        assert_eq!(judged.stable, Some(true));
        assert!(judged.draws < 8000, "{}", judged.draws);
        // the same draws: the judged run's bands are those of its first draws
        assert_eq!(judged.bands.len(), 2);
        assert!(judged.bands[1].u.is_finite());
    }

    #[test]
    fn a_fixed_number_of_draws_and_missing_values() {
        let eval = |i: usize| -> Result<Vec<f64>, ()> {
            Ok(vec![if i.is_multiple_of(4) {
                f64::NAN
            } else {
                i as f64
            }])
        };
        let options = Options {
            draws: Some(100),
            ..Options::default()
        };
        let bands = propagate(&[0.0], &eval, &options, None, |_| (), &mut |_, _| {}).unwrap();
        assert_eq!(
            (bands.draws, bands.stable, bands.bands[0].missing),
            (100, None, 25)
        );
        // a seed gives the same draws whatever the order they are made in
        assert_eq!(draw_rng(3, 17).next_u64(), draw_rng(3, 17).next_u64());
        assert_ne!(draw_rng(3, 17).next_u64(), draw_rng(3, 18).next_u64());
    }

    #[test]
    fn too_many_outputs_are_refused_before_any_draw() {
        let eval = |_: usize| -> Result<Vec<f64>, String> { panic!("no draw may be made") };
        let nominal = vec![0.0; MAX_STORED / 1000];
        let e = propagate(
            &nominal,
            &eval,
            &Options::default(),
            None,
            |e| e.to_string(),
            &mut |_, _| {},
        )
        .unwrap_err();
        assert!(e.contains("more than ripline keeps in memory"), "{e}");
    }
}
