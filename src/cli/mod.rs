//! Command-line interface: argument types (clap) and one file per command.
//!
//! Raw arguments are turned into a resolved configuration (circuit loaded,
//! overrides applied, outputs chosen) before any library call; no clap type
//! reaches the library. Exit codes: 0 success, 1 a computation failed (for
//! example a singular network), 2 invalid input or usage, 3 a limit of
//! `assess` exceeded.

mod assess;
mod bands;
mod calibrate;
mod check;
mod common;
mod compare;
mod envelope;
mod fit;
mod plan_bench;
mod profile;
mod ranges;
mod report;
mod response;
mod silencer;
mod solve;
mod sweep;
mod synth;
mod tune;

use clap::{Parser, Subcommand};
use std::process::ExitCode;

/// Pressure ripple in hydraulic line networks: solve a circuit harmonic by
/// harmonic from a Norton pump source.
#[derive(Debug, Parser)]
#[command(name = "ripline", version, about, long_about = None)]
struct Cli {
    #[command(subcommand)]
    command: Command,
    /// Worker threads for the frequency, speed and design loops (default:
    /// all cores, or RAYON_NUM_THREADS); results are the same for any number
    #[arg(long, global = true, value_name = "N", value_parser = clap::value_parser!(u16).range(1..=1024))]
    threads: Option<u16>,
}

#[derive(Debug, Subcommand)]
enum Command {
    /// Pressure ripple at every measurement point, harmonic by harmonic
    /// (the built-in demo circuit when no FILE is given).
    Solve(solve::SolveArgs),
    /// Validate a circuit file without solving and report what it holds.
    Check(check::CheckArgs),
    /// Estimate a pump's source flow ripple and source impedance from bench records.
    Fit(fit::FitArgs),
    /// Write synthetic bench records from a known source (for demos and tests).
    Synth(synth::SynthArgs),
    /// Plan a bench before building it: conditioning and predicted
    /// uncertainties per harmonic over a speed range, and the transducer
    /// spacing and second system that keep every harmonic well conditioned.
    PlanBench(plan_bench::PlanBenchArgs),
    /// Ripple amplitude along every tube and hose for one harmonic (the
    /// standing-wave pattern), as a table, CSV and a plot.
    Profile(profile::ProfileArgs),
    /// Frequency response, resonances, and the harmonics that cross them over the speed range.
    Response(response::ResponseArgs),
    /// Transmission loss of a silencer and its insertion loss in the circuit.
    Silencer(silencer::SilencerArgs),
    /// Size a silencer: vary 1 to 3 of its parameters to minimise the ripple at a point.
    Tune(tune::TuneArgs),
    /// The ripple measured at the taps beside the circuit's prediction, run
    /// by run, tap by tap, harmonic by harmonic.
    Compare(compare::CompareArgs),
    /// Adjust 1 to 6 values of the circuit to the ripple measured at its
    /// taps, with uncertainties; write the calibrated circuit file.
    Calibrate(calibrate::CalibrateArgs),
    /// Ripple over a range of pump speeds: worst speed per point and every
    /// resonance crossing.
    Sweep(sweep::SweepArgs),
    /// The circuit over its operating envelope: each limit's verdict
    /// (exit code 3 when one is exceeded) and the findings ranked by level.
    Assess(assess::AssessArgs),
    /// One self-contained HTML report of a circuit: the verdict against its
    /// limits, the schematic, inputs, worst ripple, resonances, silencers,
    /// warnings and cautions (exit code 3 when a limit is exceeded).
    Report(report::ReportArgs),
}

/// Exit code for invalid input or usage.
pub const EXIT_INPUT: u8 = 2;
/// Exit code for a computation that failed.
pub const EXIT_COMPUTE: u8 = 1;
/// Exit code of `assess` when a limit is exceeded (everything was computed
/// and written; 0 means every limit is met).
pub const EXIT_LIMITS: u8 = 3;

pub fn main() -> ExitCode {
    let cli = match Cli::try_parse() {
        Ok(cli) => cli,
        Err(e) => {
            let _ = e.print();
            return if e.use_stderr() {
                ExitCode::from(EXIT_INPUT)
            } else {
                ExitCode::SUCCESS
            };
        }
    };
    if let Some(n) = cli.threads {
        // The first and only pool of the process; if a pool exists already
        // (it cannot here), its size stands.
        let _ = rayon::ThreadPoolBuilder::new()
            .num_threads(usize::from(n))
            .build_global();
    }
    common::remove_outputs_on_signal();
    let result = match cli.command {
        Command::Solve(args) => solve::run(args),
        Command::Check(args) => check::run(args),
        Command::Fit(args) => fit::run(args),
        Command::Synth(args) => synth::run(args),
        Command::PlanBench(args) => plan_bench::run(args),
        Command::Profile(args) => profile::run(args),
        Command::Response(args) => response::run(args),
        Command::Silencer(args) => silencer::run(args),
        Command::Tune(args) => tune::run(args),
        Command::Sweep(args) => sweep::run(args),
        Command::Assess(args) => assess::run(args),
        Command::Report(args) => report::run(args),
        Command::Compare(args) => compare::run(args),
        Command::Calibrate(args) => calibrate::run(args),
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(err) => {
            if common::is_broken_pipe(&err) {
                return ExitCode::SUCCESS;
            }
            let mut text = format!("error: {err}");
            for cause in err.chain().skip(1) {
                text.push_str(&format!("\n  caused by: {cause}"));
            }
            eprintln!("{}", ripline::io::message::readable(&text));
            ExitCode::from(common::exit_code(&err))
        }
    }
}
