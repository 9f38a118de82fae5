//! `ripline plan-bench BENCH_FILE`: before building a bench, the
//! conditioning and predicted uncertainties of every harmonic over a speed
//! range, and a search of the transducer spacing and the second system for
//! the design that keeps every harmonic well conditioned.

use super::common::{self, Outputs, UsageError};
use super::ranges::{StageBars, parse_fraction, parse_range, speed_range_option};
use clap::Args;
use ripline::estimate::Observer;
use ripline::estimate::bench::Method;
use ripline::estimate::design::{self, DesignSpace, PlanOptions};
use ripline::plot;
use ripline::render::plan_bench as render;
use ripline::results::Origin;
use ripline::results::plan_bench::{PlanBenchRequest, plan_bench};
use ripline::units::Dimension;
use std::path::{Path, PathBuf};

#[derive(Debug, Args)]
pub struct PlanBenchArgs {
    /// Bench file (YAML) with a `synthesis` section: the expected source.
    file: PathBuf,
    /// Shaft speed range LOW..HIGH (rpm when bare; default: the bench's speed).
    #[arg(long, value_name = "LOW..HIGH")]
    speed_range: Option<String>,
    /// Speeds planned over the range, evenly spaced (1 to 50).
    #[arg(long, value_name = "N", default_value_t = 5)]
    speeds: usize,
    /// Noise as a fraction of each channel's rms ripple, e.g. 1% (default:
    /// the synthesis section's).
    #[arg(long, value_name = "FRACTION")]
    noise: Option<String>,
    /// First transducer spacing searched, LOW..HIGH (m when bare).
    #[arg(long, value_name = "LOW..HIGH")]
    spacing: Option<String>,
    /// Ratio of each transducer spacing to the one before, LOW..HIGH
    /// (three or more transducers).
    #[arg(long, value_name = "LOW..HIGH")]
    ratio: Option<String>,
    /// Line length of the second system searched, LOW..HIGH (m when bare;
    /// two-systems benches).
    #[arg(long, value_name = "LOW..HIGH")]
    length: Option<String>,
    /// End volume of the second system searched, LOW..HIGH (L when bare;
    /// two-systems benches).
    #[arg(long, value_name = "LOW..HIGH")]
    volume: Option<String>,
    /// Load valve resistance of the second system searched, LOW..HIGH
    /// (Pa·s/m³ when bare; two-systems benches).
    #[arg(long, value_name = "LOW..HIGH")]
    resistance: Option<String>,
    /// The condition whose line length and volume are varied (default: the
    /// last pump-run condition after the first).
    #[arg(long, value_name = "NAME")]
    system: Option<String>,
    /// Values per searched range, log-spaced (1 to 40).
    #[arg(long, value_name = "N", default_value_t = 6)]
    points: usize,
    /// Largest condition number accepted (default: the bench's `max_condition`).
    #[arg(long, value_name = "X")]
    max_condition: Option<f64>,
    /// Monte Carlo draws per predicted fit (0: conditioning only).
    #[arg(long, value_name = "N", default_value_t = 200)]
    draws: usize,
    /// Seed of the Monte Carlo generator.
    #[arg(long, value_name = "N", default_value_t = 1)]
    seed: u64,
    /// Designs listed in the ranking.
    #[arg(long, value_name = "N", default_value_t = 10)]
    top: usize,
    /// Write the predictions per design, speed and harmonic as CSV.
    #[arg(long, value_name = "FILE")]
    csv: Option<PathBuf>,
    /// Plot the condition number and the predicted uncertainties against
    /// frequency (.svg or .png).
    #[arg(long, value_name = "FILE")]
    plot: Option<PathBuf>,
    /// Write the result as JSON (schema in docs/json.md).
    #[arg(long, value_name = "FILE")]
    json: Option<PathBuf>,
}

fn usage(message: String) -> anyhow::Error {
    UsageError(message).into()
}

pub fn run(args: PlanBenchArgs) -> anyhow::Result<()> {
    if !(1..=50).contains(&args.speeds) {
        return Err(usage(format!(
            "--speeds must be between 1 and 50, found {}",
            args.speeds
        )));
    }
    if !(1..=40).contains(&args.points) {
        return Err(usage(format!(
            "--points must be between 1 and 40, found {}",
            args.points
        )));
    }
    if args.draws > super::fit::MAX_DRAWS {
        return Err(usage(format!(
            "--draws must be at most {}, found {}",
            super::fit::MAX_DRAWS,
            args.draws
        )));
    }
    if args.top == 0 {
        return Err(usage("--top must be at least 1".into()));
    }
    if let Some(m) = args.max_condition
        && !(m.is_finite() && m > 1.0)
    {
        return Err(usage(format!(
            "--max-condition must be a number above 1 (a condition number is at least 1), found {m}"
        )));
    }
    let (csv, plot) = common::csv_and_plot_paths(args.csv.as_deref(), args.plot.as_deref())?;
    let json = common::json_path(args.json.as_deref())?;
    let bench = ripline::io::bench_file::load_bench(&args.file)?;
    let file = args.file.display().to_string();
    let Some(synthesis) = bench.synthesis.as_ref() else {
        return Err(usage(format!(
            "{file}: plan-bench needs a `synthesis` section (the expected source flow ripple and source impedance, the noise and the record length)"
        )));
    };
    // The method's options: what it has to vary.
    let two_systems = bench.method == Method::TwoSystems;
    for (opt, given) in [
        ("--length", args.length.is_some()),
        ("--volume", args.volume.is_some()),
        ("--resistance", args.resistance.is_some()),
        ("--system", args.system.is_some()),
    ] {
        if given && !two_systems {
            return Err(usage(format!(
                "{opt}: {file} uses the {} method, which has no second system to vary (only --spacing and --ratio apply)",
                bench.method.name()
            )));
        }
    }
    if args.ratio.is_some() && bench.transducers.len() < 3 {
        return Err(usage(format!(
            "--ratio: {file} has {} transducers; a spacing ratio needs three or more",
            bench.transducers.len()
        )));
    }
    let system = match &args.system {
        Some(name) => {
            let found = bench
                .conditions
                .iter()
                .position(|c| &c.name == name)
                .ok_or_else(|| {
                    let names: Vec<String> = bench
                        .conditions
                        .iter()
                        .map(|c| format!("`{}`", c.name))
                        .collect();
                    usage(format!(
                        "--system {name}: {file} has no condition called `{name}`; it has {}",
                        names.join(", ")
                    ))
                })?;
            if found == 0 {
                return Err(usage(format!(
                    "--system {name}: the first condition is the reference system; vary another"
                )));
            }
            Some(found)
        }
        None => design::default_system(&bench),
    };
    let (speeds, speeds_origin) = match &args.speed_range {
        Some(text) => {
            let (lo, hi) = speed_range_option(text)?;
            let n = args.speeds;
            let v: Vec<f64> = (0..n)
                .map(|i| {
                    if n == 1 {
                        0.5 * (lo + hi)
                    } else {
                        lo + (hi - lo) * i as f64 / (n - 1) as f64
                    }
                })
                .collect();
            (v, Origin::Request)
        }
        None => (vec![bench.pump.speed_rev_s], Origin::File),
    };
    let (noise, noise_origin) = match &args.noise {
        Some(t) => (parse_fraction("--noise", t)?, Origin::Request),
        None => (synthesis.noise, Origin::File),
    };
    if noise <= 0.0 {
        return Err(usage(format!(
            "--noise: the noise must be above zero to predict uncertainties (found {noise})"
        )));
    }
    let range = |opt: &str, t: &Option<String>, dim: Dimension, unit: &str| {
        t.as_deref()
            .map(|t| parse_range(opt, t, dim, unit))
            .transpose()
    };
    let spacing = range("--spacing", &args.spacing, Dimension::Length, "m")?;
    let ratio = range("--ratio", &args.ratio, Dimension::Ratio, "")?;
    let length = range("--length", &args.length, Dimension::Length, "m")?;
    let volume = range("--volume", &args.volume, Dimension::Volume, "L")?;
    let resistance = range(
        "--resistance",
        &args.resistance,
        Dimension::Resistance,
        "Pa.s/m3",
    )?;
    if let Some((lo, _)) = ratio
        && lo < 1.0
    {
        return Err(usage(format!(
            "--ratio {}: spacings grow along the line; the ratio must be at least 1",
            args.ratio.as_deref().unwrap_or_default()
        )));
    }
    let given = spacing.is_some()
        || ratio.is_some()
        || length.is_some()
        || volume.is_some()
        || resistance.is_some();
    let space = if given {
        DesignSpace {
            spacing_m: spacing,
            ratio,
            length_m: length,
            volume_m3: volume,
            resistance_pa_s_m3: resistance,
            points: args.points,
        }
    } else {
        // The guidance's defaults: the spacing band, unequal spacings, and
        // the second system's length and volume from half to twice and a
        // quarter to four times the bench's.
        let cur = design::current_design(&bench, system);
        DesignSpace {
            spacing_m: Some(design::default_spacing_range(&bench, &speeds)),
            ratio: (bench.transducers.len() > 2).then_some((1.2, 2.5)),
            length_m: cur.length_m.map(|l| (0.5 * l, 2.0 * l)),
            volume_m3: cur.volume_m3.map(|v| (0.25 * v, 4.0 * v)),
            resistance_pa_s_m3: None,
            points: args.points,
        }
    };
    let request = PlanBenchRequest {
        options: PlanOptions {
            speeds_rev_s: speeds,
            noise,
            max_condition: args.max_condition.unwrap_or(bench.max_condition),
            draws: args.draws,
            seed: args.seed,
            system,
            space,
        },
        top: args.top,
        speeds_origin,
        noise_origin,
        max_condition_origin: if args.max_condition.is_some() {
            Origin::Request
        } else {
            Origin::File
        },
        space_origin: if given {
            Origin::Request
        } else {
            Origin::Derived
        },
    };
    let mut outputs = Outputs(common::plan_outputs(
        &[args.file.as_path()],
        &[
            ("--csv", csv.as_deref()),
            ("--plot", plot.as_deref()),
            ("--json", json.as_deref()),
        ],
        false,
    )?);
    let mut progress = StageBars::default();
    let result = plan_bench(&bench, &file, &request, &mut progress);
    progress.finish();
    let result = result?;
    outputs.csv_to(csv.as_deref(), |buf| render::csv(&result, buf))?;
    outputs.plot_to(plot.as_deref(), |tmp: &Path| {
        plot::stacked_line_charts(tmp, &render::charts(&result))
    })?;
    outputs.finish(json.as_deref(), "plan-bench", &result, render::text)
}
