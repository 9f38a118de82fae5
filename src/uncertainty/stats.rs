//! Small statistics for the uncertainty analyses: the normal distribution
//! and its quantiles, the χ² quantile, and quantiles of samples.

/// erfc(x) = 1 − erf(x): a series of erf with positive terms below 0.75
/// (Abramowitz & Stegun 7.1.6), the continued fraction of erfc above (A&S
/// 7.1.14, evaluated by Lentz's method). Relative error below 1e-13.
pub fn erfc(x: f64) -> f64 {
    if x.is_nan() {
        return f64::NAN;
    }
    if x < 0.0 {
        return 2.0 - erfc(-x);
    }
    if x < 0.75 {
        // erf x = 2/√π e^{−x²} Σ 2ⁿ x^{2n+1}/(1·3·…·(2n+1)): positive terms
        let x2 = x * x;
        let mut term = x;
        let mut sum = x;
        for n in 1..200 {
            term *= 2.0 * x2 / (2 * n + 1) as f64;
            sum += term;
            if term < 1e-17 * sum {
                break;
            }
        }
        return 1.0 - 2.0 / std::f64::consts::PI.sqrt() * (-x2).exp() * sum;
    }
    if x > 27.3 {
        return 0.0; // below the smallest double
    }
    // erfc x = e^{−x²}/√π · 1/(x + (1/2)/(x + 1/(x + (3/2)/(x + 2/(x + …)))))
    let tiny = 1e-300;
    let mut f = x;
    let mut c = x;
    let mut d = 0.0;
    for n in 1..500 {
        let a = n as f64 / 2.0;
        d = x + a * d;
        d = if d.abs() < tiny { tiny } else { d };
        c = x + a / c;
        c = if c.abs() < tiny { tiny } else { c };
        d = 1.0 / d;
        let delta = c * d;
        f *= delta;
        if (delta - 1.0).abs() < 1e-16 {
            break;
        }
    }
    (-x * x).exp() / (std::f64::consts::PI.sqrt() * f)
}

/// The standard normal distribution function Φ(x) = erfc(−x/√2)/2.
pub fn normal_cdf(x: f64) -> f64 {
    0.5 * erfc(-x / std::f64::consts::SQRT_2)
}

/// The standard normal quantile Φ⁻¹(p), 0 < p < 1, by Newton's method on
/// the smaller tail Q(x) = 1 − Φ(|x|) from x = 0 (Q is convex and falling
/// for x > 0, so the iterates rise monotonically to the root).
///
/// # Panics
/// If p is not strictly between 0 and 1.
pub fn normal_quantile(p: f64) -> f64 {
    assert!(p > 0.0 && p < 1.0, "a probability strictly between 0 and 1");
    // x ≥ 0 with Q(x) = erfc(x/√2)/2 = q, the smaller tail kept exact
    let upper = |q: f64| -> f64 {
        let mut x: f64 = 0.0;
        for _ in 0..200 {
            let density = (-0.5 * x * x).exp() / std::f64::consts::TAU.sqrt();
            let step = (0.5 * erfc(x / std::f64::consts::SQRT_2) - q) / density;
            x += step;
            if step.abs() <= 1e-15 * x.abs().max(1.0) {
                break;
            }
        }
        x
    };
    if p < 0.5 { -upper(p) } else { upper(1.0 - p) }
}

/// The p-quantile of the χ² distribution with ν degrees of freedom by
/// Wilson & Hilferty's (1931) cube-root normal approximation (within 2 %
/// for ν ≥ 3; enough for a misfit flag).
pub fn chi2_quantile(p: f64, nu: f64) -> f64 {
    let z = normal_quantile(p);
    let a = 2.0 / (9.0 * nu);
    (nu * (1.0 - a + z * a.sqrt()).powi(3)).max(0.0)
}

/// Where the p-quantile of m samples lies among their order statistics
/// (the rule of JCGM 101:2008 §7.7: the value at (M+1)·p, interpolated).
enum QuantileAt {
    /// The smallest sample.
    Lowest,
    /// The largest sample.
    Highest,
    /// Between the order statistics of 0-based indices `k` and `k + 1`, at
    /// `frac` of the way.
    Between { k: usize, frac: f64 },
}

fn quantile_at(m: usize, p: f64) -> QuantileAt {
    let pos = (m as f64 + 1.0) * p; // 1-based
    if pos <= 1.0 {
        return QuantileAt::Lowest;
    }
    if pos >= m as f64 {
        return QuantileAt::Highest;
    }
    let i = pos.floor() as usize; // 1-based lower index
    QuantileAt::Between {
        k: i - 1,
        frac: pos - i as f64,
    }
}

/// The p-quantile of sorted samples by linear interpolation between order
/// statistics (the rule of JCGM 101:2008 §7.7: the value at (M+1)·p,
/// interpolated).
///
/// # Panics
/// If `sorted` is empty.
pub fn quantile_sorted(sorted: &[f64], p: f64) -> f64 {
    assert!(!sorted.is_empty());
    match quantile_at(sorted.len(), p) {
        QuantileAt::Lowest => sorted[0],
        QuantileAt::Highest => sorted[sorted.len() - 1],
        QuantileAt::Between { k, frac } => sorted[k] + frac * (sorted[k + 1] - sorted[k]),
    }
}

/// [`quantile_sorted`] of `samples` in any order (no NaN), the same bits,
/// by selection instead of a sort (linear time): the order statistic at
/// the upper index is selected and the one below it is the largest of the
/// part before it. Reorders `samples`.
///
/// # Panics
/// If `samples` is empty.
pub fn quantile(samples: &mut [f64], p: f64) -> f64 {
    assert!(!samples.is_empty());
    let largest = |v: &[f64]| v.iter().copied().max_by(f64::total_cmp);
    match quantile_at(samples.len(), p) {
        QuantileAt::Lowest => samples
            .iter()
            .copied()
            .min_by(f64::total_cmp)
            .unwrap_or(f64::NAN),
        QuantileAt::Highest => largest(samples).unwrap_or(f64::NAN),
        QuantileAt::Between { k, frac } => {
            let (below, &mut upper, _) = samples.select_nth_unstable_by(k + 1, f64::total_cmp);
            let lower = largest(below).unwrap_or(upper);
            lower + frac * (upper - lower)
        }
    }
}

/// The finite ones of stored (f32) draws, as f64, in their order: a draw
/// that lacks the quantity holds NaN.
pub fn finite_samples(samples: &[f32]) -> Vec<f64> {
    samples
        .iter()
        .filter(|x| x.is_finite())
        .map(|&x| f64::from(x))
        .collect()
}

/// Where samples of a positive quantity gather: runs of the sorted finite
/// samples in which each is within the factor `1 + gap` of the one before
/// (a sample further from its neighbour starts a new place), increasing.
/// A quantity that moves continuously with the inputs gathers in one place;
/// one that jumps (a sweep's worst speed passing from one resonance
/// crossing to another) in several, and each place's share of the draws
/// says how often it holds.
pub fn places(samples: &[f32], gap: f64) -> Vec<Place> {
    let mut v = finite_samples(samples);
    v.sort_by(f64::total_cmp);
    let mut out: Vec<Place> = Vec::new();
    for x in v {
        match out.last_mut() {
            Some(p) if x <= p.high * (1.0 + gap) => {
                p.high = x;
                p.count += 1;
            }
            _ => out.push(Place {
                low: x,
                high: x,
                count: 1,
            }),
        }
    }
    out
}

/// One place of [`places`]: its lowest and highest sample and how many.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Place {
    /// The lowest sample there.
    pub low: f64,
    /// The highest.
    pub high: f64,
    /// Samples there.
    pub count: usize,
}

#[cfg(test)]
mod tests {
    use super::*;

    // Samples built in two runs: 300 spread evenly over 1990..2050 (steps
    // of 0.2, far within 2 % of each other) and 700 over 2450..2500, the
    // runs 400 apart (20 % of 2050): two places holding exactly 300 and
    // 700, with their ends; NaN left out; one run alone is one place.
    #[test]
    fn places_split_where_the_samples_leave_a_gap() {
        let mut s: Vec<f32> = (0..300).map(|i| 1990.0 + 0.2 * i as f32).collect();
        s.extend((0..700).map(|i| 2450.0 + 50.0 * i as f32 / 699.0));
        s.push(f32::NAN);
        s.reverse();
        let p = places(&s, 0.02);
        assert_eq!(p.len(), 2);
        assert_eq!((p[0].count, p[1].count), (300, 700));
        assert_eq!(
            (p[0].low, p[0].high),
            (1990.0, f64::from(1990.0f32 + 0.2 * 299.0))
        );
        assert_eq!((p[1].low, p[1].high), (2450.0, 2500.0));
        assert_eq!(places(&s[..700], 0.02).len(), 1);
        assert!(places(&[f32::NAN], 0.02).is_empty());
    }

    // Values from scipy 1.17.1: scipy.special.erfc(x) and
    // scipy.stats.norm.ppf(p) (tests/oracles/calibrate_refs.py).
    #[test]
    fn erfc_and_normal_quantiles_match_scipy() {
        for (x, want) in [
            (0.0, 1.0),
            (0.5, 0.4795001221869535),
            (1.5, 0.03389485352468927),
            (1.99, 0.004888586800383002),
            (2.0, 0.004677734981047266),
            (3.5, 7.430983723414129e-07),
            (6.0, 2.1519736712498913e-17),
            (-1.0, 1.8427007929497148),
        ] {
            let got = erfc(x);
            assert!(
                (got - want).abs() <= 1e-13 * want,
                "erfc({x}) = {got}, scipy {want}"
            );
        }
        for (p, want) in [
            (0.5, 0.0),
            (0.95, 1.6448536269514722),
            (0.975, 1.959963984540054),
            (0.999, 3.090232306167813),
            (0.05, -1.6448536269514729),
            (1e-6, -4.753424308822899),
        ] {
            let got = normal_quantile(p);
            assert!(
                (got - want).abs() <= 1e-12,
                "Φ⁻¹({p}) = {got}, scipy {want}"
            );
        }
    }

    // scipy.stats.chi2.ppf(0.999, nu): 16.266 (3), 45.315 (20), 149.449
    // (100); the cube-root approximation is within 2 % there.
    #[test]
    fn chi2_quantiles_are_close_to_the_exact_ones() {
        for (nu, want) in [
            (3.0, 16.26623619623813),
            (20.0, 45.31474661812586),
            (100.0, 149.44925277903886),
        ] {
            let got = chi2_quantile(0.999, nu);
            assert!((got / want - 1.0).abs() < 0.02, "ν = {nu}: {got} vs {want}");
        }
    }

    #[test]
    fn sample_quantiles_interpolate_order_statistics() {
        let s: Vec<f64> = (1..=9).map(f64::from).collect();
        assert_eq!(quantile_sorted(&s, 0.5), 5.0);
        assert_eq!(quantile_sorted(&s, 0.25), 2.5);
        assert_eq!(quantile_sorted(&s, 0.01), 1.0);
        assert_eq!(quantile_sorted(&s, 0.99), 9.0);
    }

    // Selection gives the sorted rule's bits, ties and signed zeros
    // included, at every probability.
    #[test]
    fn selection_and_sorting_agree() {
        let mut seed = 7_u64;
        for m in [1, 2, 3, 10, 999, 1000] {
            let v: Vec<f64> = (0..m)
                .map(|k| {
                    seed = seed.wrapping_mul(6_364_136_223_846_793_005).wrapping_add(1);
                    match k % 7 {
                        0 => 0.0,
                        1 => -0.0,
                        2 => 1.5,
                        _ => (seed >> 11) as f64 / (1u64 << 53) as f64 - 0.5,
                    }
                })
                .collect();
            let mut sorted = v.clone();
            sorted.sort_by(f64::total_cmp);
            for p in [0.0, 0.001, 0.025, 0.05, 0.3, 0.5, 0.95, 0.975, 0.999, 1.0] {
                let mut work = v.clone();
                assert_eq!(
                    quantile(&mut work, p).to_bits(),
                    quantile_sorted(&sorted, p).to_bits(),
                    "m {m}, p {p}"
                );
            }
        }
    }
}
