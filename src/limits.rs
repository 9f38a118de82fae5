//! The largest circuit ripline accepts, and the largest outputs it builds.
//!
//! Every step from loading to the solves takes time and memory in
//! proportion to the circuit (the sparse solve, the mean-flow split, the
//! checks), so these bounds are set by what a run may cost, not by an
//! algorithm that would blow up beyond them. Circuits over a bound are
//! refused when they are loaded, with exit code 2 and the bound named;
//! nothing is written. Measured at the bounds: DEVELOPERS.md, "Limits: what
//! they cost".

/// Most elements in a circuit (after valve blocks are expanded into their
/// parts): a 50,000-element circuit loads, checks and solves ten harmonics
/// in a few seconds and some 200 MB.
pub const MAX_ELEMENTS: usize = 50_000;

/// Most nodes in a circuit.
pub const MAX_NODES: usize = 50_000;

/// Most measurement points (`taps`) in a circuit: each is a column of every
/// report (a circuit without taps reports at every node instead).
pub const MAX_TAPS: usize = 1_000;

/// Most pumps in a circuit, and so most shafts (a pump on no named shaft
/// turns on its own).
pub const MAX_PUMPS: usize = 100;

/// Most values (measurement points × frequencies) of a frequency response:
/// 2 million, 32 MB of phasors and a CSV of about 150 MB.
pub const MAX_RESPONSE_VALUES: usize = 2_000_000;

/// Most samples of a ripple profile along all lines together: every line
/// of a circuit at [`MAX_ELEMENTS`] at the fewest samples a line takes
/// (51), and some 200 MB of results.
pub const MAX_PROFILE_SAMPLES: usize = 3_000_000;

/// Checks a frequency response of `points` measurement points at `freqs`
/// frequencies against [`MAX_RESPONSE_VALUES`].
///
/// # Errors
/// A message naming the counts and the limit when it is over.
pub fn check_response_values(points: usize, freqs: usize) -> Result<(), String> {
    let values = points.saturating_mul(freqs);
    if values > MAX_RESPONSE_VALUES {
        Err(format!(
            "{points} measurement points × {freqs} frequencies is {values} values, more than ripline's limit of {MAX_RESPONSE_VALUES}: use fewer --points, or taps to measure at fewer points"
        ))
    } else {
        Ok(())
    }
}
