//! `ripline silencer FILE --element NAME [--element NAME...]`: transmission
//! loss of a silencer (an element or a chain of elements) between anechoic
//! pipes, and its insertion loss at a point of the circuit, per pump
//! harmonic and versus frequency.

use super::common::{self, UsageError};
use super::ranges::{self, Progress};
use anyhow::Context;
use clap::{Args, ValueEnum};
use ripline::Circuit;
use ripline::analysis::response::log_grid;
use ripline::analysis::silencer::{
    Chain, WithoutReference, circuit_without, insertion_loss_db, pressure_per_unit_flow,
    transmission_loss_db,
};
use ripline::analysis::tune::speed_conditions;
use ripline::diagnostics::plane_wave_limit_hz;
use ripline::elements::{Connection, Element, ElementKind, PRESSURE_VESSEL_CAUTION};
use ripline::io::csv_response::{HarmonicLoss, write_harmonic_loss_csv, write_loss_csv};
use ripline::network::Plan;
use ripline::plot;
use ripline::units::PressureDisplay;
use std::io::Write;
use std::path::PathBuf;

/// What replaces a two-port silencer for the insertion loss.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
enum Without {
    /// A pipe of the same length with the upstream pipe's bore and wall.
    Pipe,
    /// A zero-length connection (the silencer's end nodes merged).
    ZeroLength,
}

#[derive(Debug, Args)]
pub struct SilencerArgs {
    #[command(flatten)]
    sweep: ranges::SweepArgs,
    /// Circuit file (YAML).
    file: PathBuf,
    /// The silencer element; repeat to analyse a chain, listed in order
    /// along the line (two-ports end to end, shunts at the node reached).
    #[arg(long, value_name = "NAME", required = true)]
    element: Vec<String>,
    /// The measurement point for the insertion loss (a tap, or a node when
    /// the circuit has no taps); needed when there is more than one.
    #[arg(long, value_name = "NAME")]
    tap: Option<String>,
    /// What replaces a two-port silencer in the circuit "without" it (shunts
    /// are simply removed).
    #[arg(long, value_enum, default_value = "pipe")]
    without: Without,
    /// The tube whose characteristic impedance is the reference on both sides
    /// for the transmission loss (default: the pipes met at each end).
    #[arg(long, value_name = "TUBE")]
    reference: Option<String>,
    /// Write TL and IL versus frequency as CSV
    /// (frequency_hz,transmission_loss_db,insertion_loss_db).
    #[arg(long, value_name = "FILE")]
    csv: Option<PathBuf>,
    /// Write TL and IL per pump harmonic as CSV.
    #[arg(long, value_name = "FILE")]
    harmonic_csv: Option<PathBuf>,
    /// Plot TL and IL versus frequency with the harmonic bands (.svg or .png).
    #[arg(long, value_name = "FILE")]
    plot: Option<PathBuf>,
}

pub fn run(args: SilencerArgs) -> anyhow::Result<()> {
    let csv_path = ranges::csv_output("--csv", args.csv.as_deref())?;
    let harmonic_csv_path = ranges::csv_output("--harmonic-csv", args.harmonic_csv.as_deref())?;
    let plot_path = ranges::plot_output(args.plot.as_deref())?;
    let loaded = common::load_circuit(Some(&args.file))?;
    let mut outputs = common::plan_outputs(
        &[],
        &[
            ("--csv", csv_path.as_deref()),
            ("--harmonic-csv", harmonic_csv_path.as_deref()),
            ("--plot", plot_path.as_deref()),
        ],
        false,
    )?;
    let circuit = &loaded.circuit;
    let ids = args
        .element
        .iter()
        .map(|n| ranges::element(circuit, n))
        .collect::<anyhow::Result<Vec<_>>>()?;
    let chain = Chain::new(circuit, &ids).map_err(|e| UsageError(e.to_string()))?;
    let (up, down) = match &args.reference {
        Some(name) => {
            let i = ranges::element(circuit, name)?;
            if !matches!(circuit.elements[i].kind, ElementKind::Tube(_)) {
                return Err(
                    UsageError(format!("--reference {name}: `{name}` is not a tube")).into(),
                );
            }
            (i, i)
        }
        None => chain
            .reference_pipes(circuit)
            .map_err(|e| UsageError(e.to_string()))?,
    };
    let tube_of = |i: usize| match &circuit.elements[i].kind {
        ElementKind::Tube(t) => *t,
        _ => unreachable!("reference pipes are tubes"),
    };
    let (z1, z2) = (
        tube_of(up).line.properties.z0(),
        tube_of(down).line.properties.z0(),
    );
    let reference = match args.without {
        Without::Pipe => WithoutReference::Pipe,
        Without::ZeroLength => WithoutReference::ZeroLength,
    };
    let without = circuit_without(circuit, &chain, reference, Some(&tube_of(up)))
        .map_err(|e| UsageError(e.to_string()))?;
    let (tap_name, tap_with) = ranges::point(circuit, args.tap.as_deref())?;
    let (_, tap_without) = ranges::point(&without, Some(&tap_name)).map_err(|_| {
        UsageError(format!(
            "point `{tap_name}` does not exist once the silencer is taken out: choose another point"
        ))
    })?;
    let ranges::Sweep {
        pump_index,
        speeds,
        band,
        points,
    } = ranges::sweep(circuit, &args.sweep)?;
    let pump = &circuit.pumps[pump_index];
    let z = f64::from(pump.pumping_elements);
    let plan_with =
        Plan::compile(circuit).map_err(|e| UsageError(format!("{}: {e}", loaded.source)))?;
    let plan_without = Plan::compile(&without).map_err(|e| {
        UsageError(format!(
            "{}: the circuit without the silencer cannot be solved: {e}",
            loaded.source
        ))
    })?;
    let mut ws_with = plan_with.workspace();
    let mut ws_without = plan_without.workspace();
    // Pressures with and without at one frequency, per unit source flow.
    let mut pair = |f: f64| -> anyhow::Result<(ripline::C64, ripline::C64)> {
        let with = pressure_per_unit_flow(&plan_with, pump_index, tap_with, f, &mut ws_with)
            .context("solving the circuit with the silencer")?;
        let wo = pressure_per_unit_flow(&plan_without, pump_index, tap_without, f, &mut ws_without)
            .context("solving the circuit without the silencer")?;
        Ok((with, wo))
    };
    let finite = |v: f64, what: &str, f: f64| -> anyhow::Result<f64> {
        if v.is_finite() {
            Ok(v)
        } else {
            anyhow::bail!(
                "the {what} is not a finite number at {f:.4} Hz (a lossless model at an undamped resonance?)"
            )
        }
    };

    // Versus frequency.
    let freqs = log_grid(band.0, band.1, points);
    let progress = Progress::new(freqs.len(), "transmission and insertion loss");
    let mut tl = Vec::with_capacity(freqs.len());
    let mut il = Vec::with_capacity(freqs.len());
    for (i, &f) in freqs.iter().enumerate() {
        let t = chain.transfer(circuit, f)?;
        tl.push(finite(
            transmission_loss_db(&t, z1, z2),
            "transmission loss",
            f,
        )?);
        let (with, wo) = pair(f)?;
        il.push(finite(insertion_loss_db(with, wo), "insertion loss", f)?);
        progress.set(i + 1);
    }
    progress.finish();

    // Per harmonic at the pump's speed.
    let fp = pump.pumping_frequency_hz();
    let mut rows = Vec::new();
    for k in 1..=circuit.harmonics {
        let f = f64::from(k) * fp;
        let t = chain.transfer(circuit, f)?;
        let (with, wo) = pair(f)?;
        let q = pump.flow_ripple(k).norm();
        rows.push(HarmonicLoss {
            order: k,
            freq_hz: f,
            transmission_loss_db: finite(transmission_loss_db(&t, z1, z2), "transmission loss", f)?,
            insertion_loss_db: finite(insertion_loss_db(with, wo), "insertion loss", f)?,
            without_pa: finite(wo.norm() * q, "ripple without the silencer", f)?,
            with_pa: finite(with.norm() * q, "ripple with the silencer", f)?,
        });
    }
    // Over the speed range: the smallest and largest IL of each harmonic.
    let conditions = speed_conditions(speeds.rev_s, if speeds.is_single() { 1 } else { 41 });
    let mut il_range = Vec::new();
    for k in 1..=circuit.harmonics {
        let (mut lo, mut hi) = ((f64::INFINITY, 0.0), (f64::NEG_INFINITY, 0.0));
        for c in &conditions {
            let f = f64::from(k) * z * c.speed_rev_s;
            let (with, wo) = pair(f)?;
            let v = finite(insertion_loss_db(with, wo), "insertion loss", f)?;
            if v < lo.0 {
                lo = (v, c.speed_rev_s);
            }
            if v > hi.0 {
                hi = (v, c.speed_rev_s);
            }
        }
        il_range.push((k, lo, hi));
    }

    let (bands, _) = ranges::excited_bands(pump, &speeds, circuit.harmonics);
    if let Some(path) = &csv_path {
        common::stage_csv(&mut outputs, path, |buf| {
            write_loss_csv(&freqs, &tl, &il, buf)
        })?;
    }
    if let Some(path) = &harmonic_csv_path {
        common::stage_csv(&mut outputs, path, |buf| {
            write_harmonic_loss_csv(&rows, buf)
        })?;
    }
    if let Some(path) = &plot_path {
        let names = args.element.join(" + ");
        let charts = loss_charts(&freqs, &tl, &il, &bands, &names, &tap_name);
        outputs
            .stage_with(path, |tmp| plot::stacked_line_charts(tmp, &charts))
            .with_context(|| format!("drawing {}", path.display()))?;
    }

    common::commit(outputs)?;
    let mut out = std::io::stdout().lock();
    writeln!(out, "ripline silencer: {}", loaded.source)?;
    if let Some(title) = &circuit.title {
        writeln!(out, "circuit: {title}")?;
    }
    let has_damper = ids
        .iter()
        .any(|&i| circuit.elements[i].kind.is_pressure_vessel());
    for &i in &ids {
        let e = &circuit.elements[i];
        writeln!(
            out,
            "silencer `{}` ({}, {}):",
            e.name,
            e.kind.name(),
            place(circuit, e)
        )?;
        for line in describe(e, Some(&tube_of(up))) {
            writeln!(out, "  {line}")?;
        }
    }
    writeln!(
        out,
        "transmission loss: between anechoic pipes of Z0 = {:.4e} (upstream `{}`) and {:.4e} Pa·s/m³ (downstream `{}`)",
        z1, circuit.elements[up].name, z2, circuit.elements[down].name
    )?;
    let without_text = if chain.has_two_port(circuit) {
        reference.describe().to_string()
    } else {
        "removed".to_string()
    };
    writeln!(
        out,
        "insertion loss at point `{tap_name}`: IL = 20·log10|P without / P with|, the silencer {without_text}"
    )?;
    writeln!(out)?;
    writeln!(
        out,
        "per harmonic at {:.0} rpm (pumping frequency {:.2} Hz); ripple amplitudes are peak values:",
        pump.speed_rev_s * 60.0,
        fp
    )?;
    writeln!(
        out,
        "  {:>8}  {:>12}  {:>8}  {:>8}  {:>14}  {:>14}",
        "harmonic", "frequency Hz", "TL dB", "IL dB", "without", "with"
    )?;
    for r in &rows {
        writeln!(
            out,
            "  {:>8}  {:>12.2}  {:>8.2}  {:>8.2}  {:>14}  {:>14}",
            r.order,
            r.freq_hz,
            r.transmission_loss_db,
            r.insertion_loss_db,
            PressureDisplay(r.without_pa).to_string(),
            PressureDisplay(r.with_pa).to_string()
        )?;
    }
    let rms = |v: &dyn Fn(&HarmonicLoss) -> f64| {
        (rows.iter().map(|r| v(r).powi(2)).sum::<f64>() / 2.0).sqrt()
    };
    let (rms_without, rms_with) = (rms(&|r| r.without_pa), rms(&|r| r.with_pa));
    if rms_with > 0.0 {
        writeln!(
            out,
            "  overall: {} rms without, {} rms with: {:.2} dB less",
            PressureDisplay(rms_without),
            PressureDisplay(rms_with),
            20.0 * (rms_without / rms_with).log10()
        )?;
    }
    writeln!(out)?;
    if speeds.is_single() {
        writeln!(out, "speed range: {}", speeds.source)?;
    } else {
        writeln!(
            out,
            "insertion loss of each harmonic over the speed range {}, 41 speeds:",
            speeds.source
        )?;
        for (k, lo, hi) in &il_range {
            writeln!(
                out,
                "  harmonic {:>2}: smallest {:>7.2} dB at {:>5.0} rpm, largest {:>7.2} dB at {:>5.0} rpm",
                k,
                lo.0,
                lo.1 * 60.0,
                hi.0,
                hi.1 * 60.0
            )?;
        }
    }
    let (imax, tmax) =
        tl.iter().enumerate().fold(
            (0, f64::NEG_INFINITY),
            |b, (i, &v)| if v > b.1 { (i, v) } else { b },
        );
    let (imin, lmin) =
        il.iter().enumerate().fold(
            (0, f64::INFINITY),
            |b, (i, &v)| if v < b.1 { (i, v) } else { b },
        );
    writeln!(
        out,
        "band {:.2}–{:.2} Hz: largest TL {:.2} dB at {:.2} Hz; smallest IL {:.2} dB at {:.2} Hz (negative: the silencer amplifies there)",
        band.0, band.1, tmax, freqs[imax], lmin, freqs[imin]
    )?;
    if has_damper {
        writeln!(out)?;
        writeln!(out, "{PRESSURE_VESSEL_CAUTION}")?;
    }
    out.flush()?;
    Ok(())
}

/// "at node `x`" or "`a` → `b`".
pub fn place(circuit: &Circuit, e: &Element) -> String {
    match e.connection {
        Connection::Series { a, b } => {
            format!("`{}` → `{}`", circuit.nodes[a].name, circuit.nodes[b].name)
        }
        Connection::Shunt { at } => format!("at node `{}`", circuit.nodes[at].name),
    }
}

/// What a silencer element is and its characteristic frequencies, for
/// reports (`silencer`, `check`, `tune`). `pipe`, if known, is the pipe it
/// sits on (for an expansion chamber's area ratio).
pub fn describe(e: &Element, pipe: Option<&ripline::elements::Tube>) -> Vec<String> {
    match &e.kind {
        ElementKind::SideBranch(s) => vec![format!(
            "closed side branch, length {:.4} m, bore {:.2} mm: quarter-wave frequency c/4l = {:.2} Hz (lossless estimate)",
            s.tube.line.length_m,
            s.tube.bore_m() * 1e3,
            s.quarter_wave_hz()
        )],
        ElementKind::ExpansionChamber(c) => {
            let mut v = vec![format!(
                "expansion chamber, length {:.4} m, bore {:.2} mm: first TL maximum near c/4l = {:.2} Hz; plane waves only below {:.0} Hz (first cut-on)",
                c.tube.line.length_m,
                c.tube.bore_m() * 1e3,
                c.first_maximum_hz(),
                plane_wave_limit_hz(c.tube.line.properties.wave_speed_m_s(), c.tube.bore_m())
            )];
            if let Some(p) = &c.ports {
                let shell = &c.tube.line.properties;
                let notch = |e: f64, end: &str| {
                    p.notch_hz(shell, e).map_or(String::new(), |f| {
                        format!(
                            "; {end} pipe reaches {:.1} mm in: annulus notch near c/4e = {f:.2} Hz",
                            e * 1e3
                        )
                    })
                };
                v.push(format!(
                    "ports {:.2} mm bore, {:.1} mm long outside the shell{}{}",
                    p.pipe.radius_m * 2e3,
                    p.length_m * 1e3,
                    notch(p.inlet_extension_m, "inlet"),
                    notch(p.outlet_extension_m, "outlet")
                ));
            }
            if let Some(p) = pipe {
                let m = c.tube.line.properties.area_m2() / p.line.properties.area_m2();
                v.push(format!(
                    "area ratio m = {m:.3} against the upstream pipe: lossless TL maximum 20·log10((m + 1/m)/2) = {:.2} dB (Davis et al. 1954)",
                    20.0 * ((m + 1.0 / m) / 2.0).log10()
                ));
            }
            v
        }
        ElementKind::Helmholtz(h) => vec![format!(
            "Helmholtz resonator, cavity {:.4} L, neck {:.2} mm long, {:.2} mm bore: f_H = {:.2} Hz with end corrections 2 × 0.85r ({:.2} Hz without); the model uses {}",
            h.volume_m3 * 1e3,
            h.neck_length_m * 1e3,
            h.neck.radius_m * 2e3,
            h.lumped_frequency_hz(true),
            h.lumped_frequency_hz(false),
            if h.end_correction {
                "the corrected neck"
            } else {
                "the bare neck length"
            }
        )],
        ElementKind::Damper(d) => {
            let mut v = vec![format!(
                "gas-charged pulsation damper, gas volume {:.4} L at a precharge of {:.2} bar abs, operating at {:.2} bar abs, polytropic index {:.2}",
                d.gas_volume_m3 * 1e3,
                d.precharge_pa / 1e5,
                d.operating_pa / 1e5,
                d.polytropic_index
            )];
            match d.lumped_resonance_hz() {
                Some(f_r) => v.extend([
                    format!(
                        "gas volume at the operating pressure {:.4} L (Boyle's law, isothermal charging), oil in the vessel {:.4} L; compliance {:.4e} m³/Pa",
                        d.gas_volume_at_operating_m3() * 1e3,
                        d.oil_volume_m3() * 1e3,
                        d.compliance()
                    ),
                    format!(
                        "neck {:.2} mm long, {:.2} mm bore: lumped resonance {f_r:.2} Hz (it attenuates above it); gas energy at the operating pressure about {:.1} kJ",
                        d.neck_length_m * 1e3,
                        d.neck.radius_m * 2e3,
                        d.stored_energy_j() / 1e3
                    ),
                ]),
                None => v.push(format!(
                    "BOTTOMED: the operating pressure is below the precharge, so the gas is out of the circuit and only the neck ({:.2} mm long, {:.2} mm bore) remains, closed at its end; the gas still holds about {:.1} kJ at its precharge",
                    d.neck_length_m * 1e3,
                    d.neck.radius_m * 2e3,
                    d.stored_energy_j() / 1e3
                )),
            }
            v
        }
        ElementKind::InlineDamper(d) => {
            let g = &d.vessel;
            let mut v = vec![
                format!(
                    "in-line (flow-through) pulsation damper, gas volume {:.4} L at a precharge of {:.2} bar abs, operating at {:.2} bar abs, polytropic index {:.2}",
                    g.gas_volume_m3 * 1e3,
                    g.precharge_pa / 1e5,
                    g.operating_pa / 1e5,
                    g.polytropic_index
                ),
                format!(
                    "gas volume at the operating pressure {:.4} L (Boyle's law), oil in the vessel {:.4} L plus {:.4} L in the flow path; compliance {:.4e} m³/Pa; ports {:.2} mm long, {:.2} mm bore; gas energy about {:.1} kJ",
                    g.gas_volume_at_operating_m3() * 1e3,
                    g.oil_volume_m3() * 1e3,
                    d.oil_volume_m3 * 1e3,
                    d.compliance(),
                    g.neck_length_m * 1e3,
                    g.neck.radius_m * 2e3,
                    g.stored_energy_j() / 1e3
                ),
            ];
            if g.is_bottomed() {
                v.push(
                    "BOTTOMED: the operating pressure is below the precharge, so the gas is out of the circuit and only the oil in the flow path and the ports remain".into(),
                );
            }
            if let Some(p) = pipe.filter(|_| d.compliance() > 0.0) {
                v.push(format!(
                    "against the upstream pipe (Z0 = {:.4e} Pa·s/m³) its transmission loss passes 3 dB at 1/(πCZ0) = {:.2} Hz (short ports) and rises 6 dB per octave above",
                    p.line.properties.z0(),
                    d.corner_frequency_hz(p.line.properties.z0())
                ));
            }
            v
        }
        _ => Vec::new(),
    }
}

fn loss_charts(
    freqs: &[f64],
    tl: &[f64],
    il: &[f64],
    bands: &[ripline::analysis::response::HarmonicBand],
    names: &str,
    tap: &str,
) -> Vec<plot::LineChart> {
    let (x_bands, x_markers) = ranges::band_marks(bands);
    let curve = |name: &str, v: &[f64]| plot::XySeries {
        name: name.into(),
        points: freqs.iter().copied().zip(v.iter().copied()).collect(),
        ..Default::default()
    };
    vec![
        plot::LineChart {
            title: format!("Transmission loss of {names} (anechoic ends)"),
            x_label: "frequency (Hz)".into(),
            y_label: "TL (dB)".into(),
            series: vec![curve("transmission loss", tl)],
            log_x: true,
            x_markers: x_markers.clone(),
            x_bands: x_bands.clone(),
            ..Default::default()
        },
        plot::LineChart {
            title: format!("Insertion loss at {tap} (shaded: harmonic bands over the speed range)"),
            x_label: "frequency (Hz); shaded: bands of the pump harmonics over the speed range"
                .into(),
            y_label: "IL (dB)".into(),
            series: vec![curve("insertion loss", il)],
            log_x: true,
            x_markers,
            x_bands,
            ..Default::default()
        },
    ]
}
