//! The shaft-angle reference from a once-per-revolution tacho (or encoder
//! index) channel recorded with the pressures.
//!
//! Each pulse's rising edge is located where it crosses the mid level
//! between the channel's extremes, by linear interpolation between the two
//! samples around the crossing (a re-arm below 30 % of the range keeps noise
//! on a slow edge from counting twice). The pulse times are then fitted by
//! least squares as t_i = t_ref + (i − i_ref)·T_rev, with i_ref the pulse
//! nearest the middle of the record, so that the time origin t_ref (shaft
//! angle zero) and the revolution period are nearly uncorrelated; their
//! standard uncertainties come from the fit residual (GUM Type A). When the
//! edges are steps (no sample between 10 % and 90 % of the range) the
//! crossing is known only to a sample, and a uniform quantisation error of
//! ±½ sample (variance 1/(12 fs²)) is added to the origin: it does not
//! average out when the speed is commensurate with the sample rate.

/// What the tacho channel gives.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ShaftReference {
    /// Time of the reference pulse (shaft angle zero) in s from the first sample.
    pub origin_s: f64,
    /// Standard uncertainty of the origin in s.
    pub origin_uncertainty_s: f64,
    /// Shaft speed in rev/s.
    pub speed_rev_s: f64,
    /// Standard uncertainty of the speed in rev/s.
    pub speed_uncertainty_rev_s: f64,
    /// Pulses found.
    pub pulses: usize,
}

/// Why a tacho channel cannot be used.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum TachoError {
    /// The channel is constant.
    #[error("the tacho channel holds no pulses (it is constant)")]
    NoPulses,
    /// Fewer than three pulses.
    #[error(
        "the tacho channel holds {found} pulse(s); at least 3 (one per revolution) are needed: record longer"
    )]
    TooFewPulses {
        /// Pulses found.
        found: usize,
    },
    /// A pulse interval far from the others (a missing or extra pulse).
    #[error(
        "irregular tacho pulses: the interval ending with the pulse at sample {sample} (from 0) lasts {interval_s:.6} s, the median interval {median_s:.6} s (a missing or extra pulse, or more than one pulse per revolution?)"
    )]
    Irregular {
        /// Sample index (0-based) of the pulse that ends the interval.
        sample: usize,
        /// The interval in s.
        interval_s: f64,
        /// The median interval in s.
        median_s: f64,
    },
}

/// Largest relative departure of a pulse interval from the median interval.
pub const INTERVAL_TOLERANCE: f64 = 0.1;

/// Finds the pulses of a tacho channel sampled at `fs` Hz and the shaft
/// reference they give.
///
/// # Errors
/// [`TachoError`] for a constant channel, fewer than three pulses, or an
/// interval more than [`INTERVAL_TOLERANCE`] from the median.
pub fn shaft_reference(samples: &[f64], fs: f64) -> Result<ShaftReference, TachoError> {
    let lo = samples.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = samples.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let range = hi - lo;
    if range.is_nan() || range <= 1e-12 * hi.abs().max(lo.abs()).max(1e-300) {
        return Err(TachoError::NoPulses);
    }
    let mid = lo + 0.5 * range;
    let rearm = lo + 0.3 * range;
    let mut armed = samples[0] < rearm;
    let mut times: Vec<(f64, usize)> = Vec::new();
    let mut stepped = true;
    for n in 1..samples.len() {
        let (a, b) = (samples[n - 1], samples[n]);
        if b < rearm {
            armed = true;
        }
        if armed && a < mid && b >= mid {
            let frac = (mid - a) / (b - a);
            times.push(((n as f64 - 1.0 + frac) / fs, n));
            armed = false;
            let inside = |v: f64| v > lo + 0.1 * range && v < lo + 0.9 * range;
            if inside(a) || inside(b) {
                stepped = false;
            }
        }
    }
    if times.len() < 3 {
        return Err(TachoError::TooFewPulses { found: times.len() });
    }
    let mut intervals: Vec<f64> = times.windows(2).map(|w| w[1].0 - w[0].0).collect();
    let mut sorted = intervals.clone();
    sorted.sort_by(f64::total_cmp);
    let median = sorted[sorted.len() / 2];
    for (i, d) in intervals.iter_mut().enumerate() {
        if (*d / median - 1.0).abs() > INTERVAL_TOLERANCE {
            return Err(TachoError::Irregular {
                sample: times[i + 1].1,
                interval_s: *d,
                median_s: median,
            });
        }
    }
    // t_i = t_ref + (i − i_ref)·T by least squares.
    let count = times.len();
    let i_ref = (count - 1) / 2;
    let xs: Vec<f64> = (0..count).map(|i| i as f64 - i_ref as f64).collect();
    let n = count as f64;
    let sx: f64 = xs.iter().sum();
    let sxx: f64 = xs.iter().map(|x| x * x).sum();
    let sy: f64 = times.iter().map(|t| t.0).sum();
    let sxy: f64 = xs.iter().zip(&times).map(|(x, t)| x * t.0).sum();
    let det = n * sxx - sx * sx;
    let period = (n * sxy - sx * sy) / det;
    let origin = (sxx * sy - sx * sxy) / det;
    let rss: f64 = xs
        .iter()
        .zip(&times)
        .map(|(x, t)| (t.0 - origin - x * period).powi(2))
        .sum();
    let var = if count > 2 { rss / (n - 2.0) } else { 0.0 };
    let mut var_origin = var * sxx / det;
    if stepped {
        var_origin += 1.0 / (12.0 * fs * fs);
    }
    let var_period = var * n / det;
    Ok(ShaftReference {
        origin_s: origin,
        origin_uncertainty_s: var_origin.sqrt(),
        speed_rev_s: 1.0 / period,
        speed_uncertainty_rev_s: var_period.sqrt() / (period * period),
        pulses: count,
    })
}

/// Checks that the tacho's speed × the pumping elements `z` agrees with the
/// pumping frequency `found_hz` of the pressure ripple within 0.5 %; the
/// message says what to check when it does not.
///
/// # Errors
/// The message.
pub fn check_speed(shaft: &ShaftReference, z: u32, found_hz: f64) -> Result<(), String> {
    let from_tacho = shaft.speed_rev_s * f64::from(z);
    if (from_tacho / found_hz - 1.0).abs() > 0.005 {
        return Err(format!(
            "the tacho gives {:.2} rpm, so a pumping frequency of {from_tacho:.3} Hz with {z} pumping elements, but the pressure ripple repeats at {found_hz:.3} Hz: check `pumping_elements` and that the tacho gives one pulse per revolution",
            shaft.speed_rev_s * 60.0
        ));
    }
    Ok(())
}

/// A tacho signal for synthetic records: level 0, pulses of level 5 lasting
/// a tenth of a revolution, whose rising edge is a linear ramp over ±2 % of
/// a revolution centred on shaft angle zero (so that the mid-level crossing
/// is at the reference). `angle_rev(t)` is the shaft angle in revolutions.
pub fn synthetic_pulse(angle_rev: f64) -> f64 {
    let x = angle_rev - angle_rev.floor(); // 0..1
    let x = if x > 0.5 { x - 1.0 } else { x }; // −0.5..0.5
    let ramp = 0.02;
    let level = 5.0;
    if x < -ramp {
        0.0
    } else if x < ramp {
        level * (x + ramp) / (2.0 * ramp)
    } else if x < 0.1 {
        level
    } else {
        0.0
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn channel(fs: f64, n: usize, speed: f64, offset_rev: f64) -> Vec<f64> {
        (0..n)
            .map(|i| synthetic_pulse(offset_rev + speed * i as f64 / fs))
            .collect()
    }

    #[test]
    fn pulses_give_the_speed_and_the_reference() {
        // 24.7 rev/s sampled at 6 kHz, record starting at 0.3 rev: the
        // reference pulse nearest the middle is where the angle is an
        // integer, t = (k − 0.3)/24.7; linear ramps are interpolated exactly.
        let (fs, speed) = (6000.0, 24.7);
        let r = shaft_reference(&channel(fs, 6000, speed, 0.3), fs).unwrap();
        assert!((r.speed_rev_s - speed).abs() < 1e-9, "{r:?}");
        let turns = r.origin_s * speed + 0.3;
        assert!((turns - turns.round()).abs() < 1e-9, "{r:?}");
        assert_eq!(r.pulses, 24); // angles 1 ..= 24 between 0.3 and 25.0 rev
    }

    #[test]
    fn bad_channels_are_refused() {
        assert_eq!(
            shaft_reference(&[1.0; 100], 1000.0),
            Err(TachoError::NoPulses)
        );
        let short = channel(6000.0, 400, 24.7, 0.3);
        assert!(matches!(
            shaft_reference(&short, 6000.0),
            Err(TachoError::TooFewPulses { .. })
        ));
        // A pulse missing: one interval doubles.
        let mut c = channel(6000.0, 6000, 25.0, 0.5);
        for v in &mut c[2300..2560] {
            *v = 0.0;
        }
        assert!(matches!(
            shaft_reference(&c, 6000.0),
            Err(TachoError::Irregular { .. })
        ));
    }
}
