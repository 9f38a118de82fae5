//! The options of uncertainty bands (`solve --bands`), shared by the
//! commands that report them.

use super::common::UsageError;
use super::ranges::Progress;
use clap::{Args, ValueEnum};
use ripline::envelope::OperatingPoint;
use ripline::io::CircuitTemplate;
use ripline::uncertainty::bands::{BandRequest, Method};
use ripline::uncertainty::monte_carlo::{MAX_DRAWS, Options};

/// How bands are computed, as written on the command line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum BandMethod {
    /// Monte Carlo (JCGM 101) with the first-order bands checked beside it.
    MonteCarlo,
    /// The first-order (linearised) bands only (JCGM 100), 2n + 1 solves.
    FirstOrder,
}

#[derive(Debug, Args)]
pub struct BandArgs {
    /// Uncertainty bands from the circuit's tolerances and the source
    /// files' uncertainties: monte-carlo or first-order.
    #[arg(long, value_name = "METHOD")]
    bands: Option<BandMethod>,
    /// Coverage probability of the bands in per cent (default 90: the 5th
    /// to 95th percentile).
    #[arg(long, value_name = "PERCENT", requires = "bands")]
    coverage: Option<f64>,
    /// Seed of the Monte Carlo draws (default 1).
    #[arg(long, value_name = "N", requires = "bands")]
    seed: Option<u64>,
    /// A fixed number of Monte Carlo draws (default: as many as make the
    /// bands stable, JCGM 101 §7.9).
    #[arg(long, value_name = "N", requires = "bands")]
    draws: Option<usize>,
}

impl BandArgs {
    /// The request, `None` without `--bands`.
    pub fn request(&self) -> anyhow::Result<Option<BandRequest>> {
        let Some(method) = self.bands else {
            return Ok(None);
        };
        let mut mc = Options::default();
        if let Some(c) = self.coverage {
            if !(50.0..=99.9).contains(&c) {
                return Err(UsageError(format!(
                    "--coverage must be between 50 and 99.9 (per cent), found {c}"
                ))
                .into());
            }
            mc.coverage = c / 100.0;
        }
        if let Some(s) = self.seed {
            mc.seed = s;
        }
        if let Some(n) = self.draws {
            if method == BandMethod::FirstOrder {
                return Err(
                    UsageError("--draws applies to --bands monte-carlo only".into()).into(),
                );
            }
            let least = (2.0 / (1.0 - mc.coverage)).ceil() as usize;
            if !(least..=MAX_DRAWS).contains(&n) {
                return Err(UsageError(format!(
                    "--draws must be between {least} (enough for the tails of a {} % band) and {MAX_DRAWS}, found {n}",
                    mc.coverage * 100.0
                ))
                .into());
            }
            mc.draws = Some(n);
        }
        Ok(Some(BandRequest {
            method: match method {
                BandMethod::MonteCarlo => Method::MonteCarlo,
                BandMethod::FirstOrder => Method::Linear,
            },
            monte_carlo: mc,
        }))
    }
}

/// A progress bar of Monte Carlo draws on a terminal (nothing when piped).
pub struct DrawProgress(Option<Progress>);

impl DrawProgress {
    pub fn new() -> Self {
        DrawProgress(None)
    }

    /// Shows `done` of `planned` draws.
    pub fn update(&mut self, done: usize, planned: usize) {
        self.0
            .get_or_insert_with(|| Progress::new(planned, "Monte Carlo draws"))
            .set_of(done, planned);
    }

    /// Removes the bar.
    pub fn finish(self) {
        if let Some(p) = self.0 {
            p.finish();
        }
    }
}

/// Computes the bands of every envelope point's result with `compute`
/// (template, point, request, bands, nominal, progress) and stores them
/// with `store`; nothing without `--bands`.
///
/// # Errors
/// The first point whose bands fail, named.
pub fn over_points<R, Q, B>(
    results: &mut [(OperatingPoint, R)],
    requests: &[Q],
    band_request: Option<&BandRequest>,
    template: Option<&CircuitTemplate>,
    compute: impl Fn(
        &CircuitTemplate,
        &OperatingPoint,
        &Q,
        &BandRequest,
        &R,
        &mut dyn FnMut(usize, usize),
    ) -> Result<B, ripline::results::Error>,
    store: impl Fn(&mut R, B),
) -> anyhow::Result<()> {
    let (Some(b), Some(t)) = (band_request, template) else {
        return Ok(());
    };
    for ((point, result), request) in results.iter_mut().zip(requests) {
        let mut progress = DrawProgress::new();
        let bands = compute(t, point, request, b, result, &mut |d, n| {
            progress.update(d, n);
        });
        progress.finish();
        let bands = bands.map_err(|e| {
            let context = if *point == OperatingPoint::default() {
                format!("uncertainty bands of {}", t.file())
            } else {
                format!("bands at envelope point `{}`", point.label())
            };
            anyhow::Error::new(e).context(context)
        })?;
        store(result, bands);
    }
    Ok(())
}
