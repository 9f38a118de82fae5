//! `silencer`: the transmission loss of a silencer (an element or a chain
//! of elements) between anechoic pipes, and its insertion loss at a point
//! of the circuit, per pump harmonic, over the speed range and over a band.

use super::describe;
use super::response::{PumpRef, adjusted};
use super::setup::{FrequencySweep, Grid, SpeedRange, excited_bands, grid, speed_range};
use super::{Error, Input, Notice, Origin, Subject, notices};
use crate::analysis::response::{HarmonicBand, log_grid};
use crate::analysis::ripple::report_points;
use crate::analysis::silencer::{
    Chain, WithoutReference, circuit_without, insertion_loss_db, pressure_per_unit_flow,
    transmission_loss_db,
};
use crate::analysis::sweep::CHECKED_STEP;
use crate::analysis::tune::{Objective, RippleEvaluator, speed_conditions};
use crate::circuit::TapLocation;
use crate::elements::PRESSURE_VESSEL_CAUTION;
use crate::network::Plan;
use crate::{C64, Circuit};
use serde::Serialize;

/// Speeds across the range for the insertion loss of each harmonic.
pub const RANGE_SPEEDS: usize = 41;

/// What to compute, resolved against the circuit.
#[derive(Debug, Clone)]
pub struct SilencerRequest {
    /// The silencer's elements, in order along the line.
    pub elements: Vec<usize>,
    /// The tube whose Z0 is the reference on both sides for the TL
    /// (default: the pipes met at each end).
    pub reference_tube: Option<usize>,
    /// What replaces a two-port silencer for the insertion loss.
    pub without: WithoutReference,
    /// The point of the insertion loss: its name and location.
    pub tap: (String, TapLocation),
    /// The pump, speeds and frequencies.
    pub sweep: FrequencySweep,
}

/// A silencer element and what it is.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SilencerElement {
    /// Its name.
    pub name: String,
    /// Its kind.
    pub kind: &'static str,
    /// Where it sits.
    pub place: String,
    /// Its inputs and characteristic frequencies, in words.
    pub description: Vec<String>,
}

/// The pipes whose characteristic impedances bound the TL.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TlReference {
    /// The upstream pipe.
    pub upstream: String,
    /// Its lossless Z0, Pa·s/m³.
    pub upstream_z0_pa_s_m3: f64,
    /// The downstream pipe.
    pub downstream: String,
    /// Its lossless Z0, Pa·s/m³.
    pub downstream_z0_pa_s_m3: f64,
}

/// TL and IL at one pump harmonic at the pump's speed.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct HarmonicLoss {
    /// Harmonic order.
    pub order: u32,
    /// Frequency, Hz.
    pub freq_hz: f64,
    /// Transmission loss, dB.
    pub transmission_loss_db: f64,
    /// Insertion loss, dB.
    pub insertion_loss_db: f64,
    /// Ripple amplitude (peak) without the silencer, Pa.
    pub without_pa: f64,
    /// Ripple amplitude (peak) with it, Pa.
    pub with_pa: f64,
}

/// The smallest and largest insertion loss of a harmonic over the speeds.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct LossRange {
    /// Harmonic order.
    pub order: u32,
    /// Smallest IL, dB, and the speed (rev/s) where it occurs.
    pub smallest: (f64, f64),
    /// Largest IL, dB, and the speed (rev/s).
    pub largest: (f64, f64),
}

/// The decision over the speed range: the worst overall rms ripple at the
/// point without the silencer and with it, each with its speed (found
/// between the speeds to 0.01 dB, as `tune`, `sweep` and `assess` find it).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct WorstWithout {
    /// Without the silencer: the worst overall rms, Pa.
    pub without_pa: f64,
    /// Its shaft speed, rev/s.
    pub without_speed_rev_s: f64,
    /// With it: the worst overall rms, Pa.
    pub with_pa: f64,
    /// Its shaft speed, rev/s.
    pub with_speed_rev_s: f64,
}

/// The result of `silencer`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SilencerResult {
    /// The circuit file.
    pub subject: Subject,
    /// Inputs: pump, harmonics, speed, tap, the "without" reference.
    pub inputs: Vec<Input>,
    /// The silencer's elements.
    pub elements: Vec<SilencerElement>,
    /// The TL's reference pipes.
    pub reference: TlReference,
    /// The insertion loss's point.
    pub tap: String,
    /// What the circuit without the silencer has in its place, in words.
    pub without: String,
    /// The pump.
    pub pump: PumpRef,
    /// The operating speed range.
    pub speed_range: SpeedRange,
    /// The frequency grid.
    pub grid: Grid,
    /// Per harmonic at the pump's speed (those with source flow).
    pub harmonics: Vec<HarmonicLoss>,
    /// Harmonics without source flow in the pump's table, left out.
    pub silent_orders: Vec<u32>,
    /// Overall rms without the silencer, Pa.
    pub rms_without_pa: f64,
    /// Overall rms with it, Pa.
    pub rms_with_pa: f64,
    /// The worst overall ripple at the point over the speed range, without
    /// and with the silencer (`None` for a single speed).
    pub worst_over_speeds: Option<WorstWithout>,
    /// Per harmonic over [`RANGE_SPEEDS`] speeds of the range (empty for a
    /// single speed).
    pub over_speeds: Vec<LossRange>,
    /// The bands of the harmonics the pump's source flow has.
    pub bands: Vec<HarmonicBand>,
    /// Grid frequencies, Hz.
    pub freqs_hz: Vec<f64>,
    /// TL at each grid frequency, dB.
    pub transmission_loss_db: Vec<f64>,
    /// IL at each grid frequency, dB.
    pub insertion_loss_db: Vec<f64>,
    /// Safety cautions (a gas-charged damper is a pressure vessel).
    pub cautions: Vec<String>,
    /// Model-validity warnings up to the top of the band.
    pub warnings: Vec<Notice>,
}

impl SilencerResult {
    /// The grid frequency of the largest TL: (Hz, dB).
    pub fn largest_tl(&self) -> (f64, f64) {
        extreme(&self.freqs_hz, &self.transmission_loss_db, |a, b| a > b)
    }

    /// The grid frequency of the smallest IL: (Hz, dB).
    pub fn smallest_il(&self) -> (f64, f64) {
        extreme(&self.freqs_hz, &self.insertion_loss_db, |a, b| a < b)
    }
}

fn extreme(freqs: &[f64], v: &[f64], better: impl Fn(f64, f64) -> bool) -> (f64, f64) {
    let mut best = (freqs[0], v[0]);
    for (f, x) in freqs.iter().zip(v) {
        if better(*x, best.1) {
            best = (*f, *x);
        }
    }
    best
}

fn finite(v: f64, what: &str, f: f64) -> Result<f64, Error> {
    if v.is_finite() {
        Ok(v)
    } else {
        Err(Error::NotFinite(format!(
            "the {what} is not a finite number at {f:.4} Hz (a lossless model at an undamped resonance?)"
        )))
    }
}

/// Computes TL and IL as `silencer` does; `progress(done, total)` follows
/// the frequency grid.
///
/// # Errors
/// [`Error::Request`] for a chain, reference or point that does not fit
/// the circuit; [`Error::Failed`] if a solve fails; [`Error::NotFinite`]
/// for a value that is not a finite number.
pub fn silencer(
    circuit: Circuit,
    file: &str,
    request: &SilencerRequest,
    progress: &mut dyn FnMut(usize, usize),
) -> Result<SilencerResult, Error> {
    let pump_index = request.sweep.pump_index;
    let (circuit, mut inputs) = adjusted(
        circuit,
        pump_index,
        request.sweep.harmonics,
        request.sweep.speed_rev_s,
    );
    let circuit = &circuit;
    let request_error = |e: crate::analysis::silencer::SilencerError| Error::Request(e.to_string());
    let chain = Chain::new(circuit, &request.elements).map_err(request_error)?;
    let (up, down) = match request.reference_tube {
        Some(i) => (i, i),
        None => chain.reference_pipes(circuit).map_err(request_error)?,
    };
    let line_of = |i: usize| {
        let kind = &circuit.elements[i].kind;
        kind.line()
            .map(|l| (kind, l.properties.z0()))
            .ok_or_else(|| {
                Error::Request(format!(
                    "`{}` is not a tube or a hose",
                    circuit.elements[i].name
                ))
            })
    };
    let ((up_kind, z1), (_, z2)) = (line_of(up)?, line_of(down)?);
    let without =
        circuit_without(circuit, &chain, request.without, Some(up_kind)).map_err(request_error)?;
    let (tap_name, tap_with) = (&request.tap.0, request.tap.1);
    let tap_without = report_points(&without)
        .into_iter()
        .find(|p| &p.name == tap_name)
        .ok_or_else(|| {
            Error::Request(format!(
                "point `{tap_name}` does not exist once the silencer is taken out: choose another point"
            ))
        })?
        .location;
    inputs.push(Input::text("tap", tap_name, Origin::Request));
    let speeds = speed_range(
        circuit,
        pump_index,
        request.sweep.speed_range,
        request.sweep.envelope_speed_range,
    );
    let grid = grid(
        circuit,
        pump_index,
        &speeds,
        request.sweep.band,
        request.sweep.points,
    );
    let warnings = notices(&crate::diagnostics::circuit_warnings(circuit, grid.high_hz));
    let pump = &circuit.pumps[pump_index];
    let z = f64::from(pump.pumping_elements);
    let plan_with = Plan::compile(circuit).map_err(|e| Error::Request(format!("{file}: {e}")))?;
    let plan_without = Plan::compile(&without).map_err(|e| {
        Error::Request(format!(
            "{file}: the circuit without the silencer cannot be solved: {e}"
        ))
    })?;
    let mut ws_with = plan_with.workspace();
    let mut ws_without = plan_without.workspace();
    // Pressures with and without at one frequency, per unit source flow.
    let mut pair = |f: f64| -> Result<(C64, C64), Error> {
        let with = pressure_per_unit_flow(&plan_with, pump_index, tap_with, f, &mut ws_with)
            .map_err(|e| Error::failed("solving the circuit with the silencer", e))?;
        let wo = pressure_per_unit_flow(&plan_without, pump_index, tap_without, f, &mut ws_without)
            .map_err(|e| Error::failed("solving the circuit without the silencer", e))?;
        Ok((with, wo))
    };
    let transfer = |f: f64| {
        chain
            .transfer(circuit, f)
            .map_err(|e| Error::failed("the silencer's transfer matrix", e))
    };

    // Versus frequency.
    let freqs = log_grid(grid.low_hz, grid.high_hz, grid.points);
    let mut tl = Vec::with_capacity(freqs.len());
    let mut il = Vec::with_capacity(freqs.len());
    for (i, &f) in freqs.iter().enumerate() {
        tl.push(finite(
            transmission_loss_db(&transfer(f)?, z1, z2),
            "transmission loss",
            f,
        )?);
        let (with, wo) = pair(f)?;
        il.push(finite(insertion_loss_db(with, wo), "insertion loss", f)?);
        progress(i + 1, freqs.len());
    }

    // Per harmonic at the pump's speed.
    let fp = pump.pumping_frequency_hz();
    let mut rows = Vec::new();
    // harmonics without source flow excite nothing: left out (and named)
    let (with_flow, silent_orders): (Vec<u32>, Vec<u32>) =
        (1..=circuit.harmonics).partition(|&k| pump.has_source_flow(k));
    for &k in &with_flow {
        let f = f64::from(k) * fp;
        let (with, wo) = pair(f)?;
        let q = pump.flow_ripple(k).norm();
        rows.push(HarmonicLoss {
            order: k,
            freq_hz: f,
            transmission_loss_db: finite(
                transmission_loss_db(&transfer(f)?, z1, z2),
                "transmission loss",
                f,
            )?,
            insertion_loss_db: finite(insertion_loss_db(with, wo), "insertion loss", f)?,
            without_pa: finite(wo.norm() * q, "ripple without the silencer", f)?,
            with_pa: finite(with.norm() * q, "ripple with the silencer", f)?,
        });
    }
    let rms = |v: &dyn Fn(&HarmonicLoss) -> f64| {
        (rows.iter().map(|r| v(r).powi(2)).sum::<f64>() / 2.0).sqrt()
    };
    let (rms_without_pa, rms_with_pa) = (rms(&|r| r.without_pa), rms(&|r| r.with_pa));

    // Over the speed range: the smallest and largest IL of each harmonic.
    let mut over_speeds = Vec::new();
    if !speeds.is_single() {
        let conditions = speed_conditions(speeds.rev_s(), RANGE_SPEEDS);
        for &k in &with_flow {
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
            over_speeds.push(LossRange {
                order: k,
                smallest: lo,
                largest: hi,
            });
        }
    }
    // The decision: the worst overall ripple at the point over the speed
    // range, without the silencer and with it, on a start grid no coarser
    // than the worst-speed search is checked on (sweep::CHECKED_STEP).
    let worst_over_speeds = if speeds.is_single() {
        None
    } else {
        let (lo, hi) = speeds.rev_s();
        // n log-spaced speeds lie (hi/lo)^(1/(n − 1)) apart: at most
        // 1 + CHECKED_STEP once n − 1 ≥ ln(hi/lo)/ln(1 + CHECKED_STEP)
        let steps = (hi / lo).ln() / CHECKED_STEP.ln_1p();
        let count = RANGE_SPEEDS.max(steps.floor() as usize + 2);
        let conditions = speed_conditions((lo, hi), count);
        let worst = |c: &Circuit, point: TapLocation, what: &str| -> Result<(f64, f64), Error> {
            let s = RippleEvaluator::new(c, pump_index, point, &conditions, Objective::Worst)
                .evaluate(c)
                .map_err(|e| {
                    Error::failed(format!("the worst ripple over the speed range {what}"), e)
                })?;
            let pa = finite(s.objective_pa, "worst ripple over the speed range", lo)?;
            Ok((pa, s.worst.map_or(lo, |(_, n)| n)))
        };
        let (without_pa, without_speed_rev_s) =
            worst(&without, tap_without, "without the silencer")?;
        let (with_pa, with_speed_rev_s) = worst(circuit, tap_with, "with the silencer")?;
        Some(WorstWithout {
            without_pa,
            without_speed_rev_s,
            with_pa,
            with_speed_rev_s,
        })
    };
    let (bands, _) = excited_bands(circuit, pump_index, &speeds);
    let elements = request
        .elements
        .iter()
        .map(|&i| {
            let e = &circuit.elements[i];
            SilencerElement {
                name: e.name.clone(),
                kind: e.kind.name(),
                place: describe::place(circuit, e),
                description: describe::silencer(e, up_kind.line()),
            }
        })
        .collect();
    let has_damper = request
        .elements
        .iter()
        .any(|&i| circuit.elements[i].kind.is_pressure_vessel());
    let without_text = if chain.has_two_port(circuit) {
        request.without.describe().to_string()
    } else {
        "removed".to_string()
    };
    inputs.push(Input::text("without", &without_text, Origin::Request));
    Ok(SilencerResult {
        subject: Subject {
            file: file.to_string(),
            title: circuit.title.clone(),
        },
        inputs,
        elements,
        reference: TlReference {
            upstream: circuit.elements[up].name.clone(),
            upstream_z0_pa_s_m3: z1,
            downstream: circuit.elements[down].name.clone(),
            downstream_z0_pa_s_m3: z2,
        },
        tap: tap_name.clone(),
        without: without_text,
        pump: PumpRef::of(circuit, pump_index),
        speed_range: speeds,
        grid,
        harmonics: rows,
        silent_orders,
        rms_without_pa,
        rms_with_pa,
        worst_over_speeds,
        over_speeds,
        bands,
        freqs_hz: freqs,
        transmission_loss_db: tl,
        insertion_loss_db: il,
        cautions: if has_damper {
            vec![PRESSURE_VESSEL_CAUTION.to_string()]
        } else {
            Vec::new()
        },
        warnings,
    })
}
