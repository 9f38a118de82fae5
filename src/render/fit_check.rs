//! Renderers of [`SelfCheckResult`] (`fit --self-check`): the terminal
//! table and the long-format CSV, one row per harmonic and quantity.

use crate::results::fit_check::{SelfCheckResult, quantity_symbol};
use std::io::Write;

/// Header of the self-check's `--csv` table.
pub const CHECK_HEADER: [&str; 10] = [
    "harmonic",
    "frequency_hz",
    "status",
    "quantity",
    "samples",
    "bias",
    "bias_standard_errors",
    "spread_over_sigma",
    "coverage_1sigma",
    "coverage_2sigma",
];

/// Writes the terminal report.
///
/// # Errors
/// The writer's error.
pub fn text(r: &SelfCheckResult, out: &mut impl Write) -> std::io::Result<()> {
    let (seeds, draws) = (r.seeds, r.draws);
    writeln!(out, "ripline fit --self-check: {}", r.subject.file)?;
    if let Some(t) = &r.subject.title {
        writeln!(out, "bench: {t}")?;
    }
    writeln!(
        out,
        "{seeds} seeds of synthetic data from the bench's known source at {} % noise, each fitted as records are ({draws} Monte Carlo draws){}",
        100.0 * r.noise,
        if r.failed_seeds > 0 {
            format!("; {} seeds gave no estimate", r.failed_seeds)
        } else {
            String::new()
        }
    )?;
    writeln!(
        out,
        "without noise: largest relative error {:.1e} (Qs), {:.1e} (Zs) over the harmonics estimated without flags",
        r.noise_free_flow_error, r.noise_free_impedance_error
    )?;
    writeln!(
        out,
        "bias: mean error (relative for amplitudes, rad for phases) and in standard errors of the mean; spread/σ: observed spread over the reported standard uncertainty; coverage of ±1σ and ±2σ (68.3 % and 95.4 % for a normal error); sampling error of spread/σ about {:.0} %",
        100.0 / (2.0 * seeds.max(1) as f64).sqrt()
    )?;
    writeln!(out)?;
    writeln!(
        out,
        "{:>3} {:>9}  {:<15} {:<7} {:>10} {:>7} {:>9} {:>7} {:>7}",
        "k", "freq Hz", "status", "", "bias", "(SE)", "spread/σ", "±1σ", "±2σ"
    )?;
    for h in &r.harmonics {
        for (i, q) in h.quantities.iter().enumerate() {
            let (k, f, s) = if i == 0 {
                (
                    h.order.to_string(),
                    format!("{:.2}", h.freq_hz),
                    h.status.key(),
                )
            } else {
                (String::new(), String::new(), "")
            };
            writeln!(
                out,
                "{k:>3} {f:>9}  {s:<15} {:<7} {:>+10.2e} {:>+7.1} {:>9.2} {:>6.1}% {:>6.1}%",
                quantity_symbol(q.quantity),
                q.bias,
                q.bias_standard_errors,
                q.spread_over_sigma,
                100.0 * q.coverage_1sigma,
                100.0 * q.coverage_2sigma
            )?;
        }
    }
    writeln!(out)?;
    if r.outside.is_empty() {
        writeln!(
            out,
            "every harmonic estimated without flags: bias within 3 standard errors, spread/σ within 1 ± {:.2}",
            r.spread_band
        )
    } else {
        writeln!(
            out,
            "outside bias ±3 SE or spread/σ 1 ± {:.2} among the harmonics estimated without flags: {} (about 1 in 100 quantities falls outside by chance)",
            r.spread_band,
            r.outside.join(", ")
        )
    }
}

/// Writes one row per harmonic and quantity ([`CHECK_HEADER`]).
///
/// # Errors
/// The CSV writer's error.
pub fn csv(r: &SelfCheckResult, out: impl Write) -> Result<(), csv::Error> {
    let mut w = csv::Writer::from_writer(out);
    w.write_record(CHECK_HEADER)?;
    for h in &r.harmonics {
        for q in &h.quantities {
            w.write_record([
                h.order.to_string(),
                format!("{}", h.freq_hz),
                h.status.key().to_string(),
                quantity_symbol(q.quantity).to_string(),
                q.samples.to_string(),
                format!("{:e}", q.bias),
                format!("{}", q.bias_standard_errors),
                format!("{}", q.spread_over_sigma),
                format!("{}", q.coverage_1sigma),
                format!("{}", q.coverage_2sigma),
            ])?;
        }
    }
    w.flush()?;
    Ok(())
}
