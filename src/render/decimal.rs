//! Numbers for long CSV tables: the shortest decimal that reads back as the
//! same `f64`, in plain notation (no exponent), which is the text Rust's
//! `{}` gives, written several times faster.
//!
//! The digits come from the Ryū algorithm (Adams, "Ryū: fast float-to-string
//! conversion", PLDI 2018; the `ryu` crate), which finds the shortest digit
//! string that rounds back to the number, the one closest to it when several
//! are as short, as the standard library's formatter does. Only the layout
//! differs: `ryu` writes `1.4e10` or `1.0` where `{}` writes `14000000000`
//! or `1`, so the digits and the decimal exponent are taken from its text
//! and laid out again. The two differ on one more point: where the number is
//! exactly halfway between two shortest candidates (2⁻²⁵ =
//! 0.0000000298023223876953125, or 983065286016944.25), Ryū rounds to even
//! and `{}` rounds up; such numbers, whose exact expansion is short, are
//! written by `{}` itself. A test compares the two texts over millions
//! of numbers.

use std::io::Write;

/// Appends `x` as `format!("{x}")` would write it: the shortest round-trip
/// digits in plain notation, `-` for negative numbers (and −0), `NaN`,
/// `inf` and `-inf` as they are.
pub fn push_shortest(out: &mut Vec<u8>, x: f64) {
    if !x.is_finite() || may_be_a_tie(x) {
        // writing into a Vec cannot fail
        let _ = write!(out, "{x}");
        return;
    }
    if x == 0.0 {
        out.extend_from_slice(if x.is_sign_negative() { b"-0" } else { b"0" });
        return;
    }
    let mut buffer = ryu::Buffer::new();
    let text = buffer.format_finite(x).as_bytes();
    let (negative, text) = match text.split_first() {
        Some((b'-', rest)) => (true, rest),
        _ => (false, text),
    };
    let (mantissa, exponent) = match text.iter().position(|&b| b == b'e') {
        Some(k) => (&text[..k], parse_exponent(&text[k + 1..])),
        None => (text, 0),
    };
    // the mantissa's digits without its point: value = 0.d₁d₂…dₙ × 10^point
    let mut digits = [0u8; 40];
    let mut n = 0;
    let mut point = None;
    for &b in mantissa {
        if b == b'.' {
            point = Some(n);
        } else if n < digits.len() {
            digits[n] = b;
            n += 1;
        }
    }
    let mut point = point.unwrap_or(n) as i32 + exponent;
    let mut start = 0;
    while start < n && digits[start] == b'0' {
        start += 1;
        point -= 1;
    }
    let mut end = n;
    while end > start && digits[end - 1] == b'0' {
        end -= 1;
    }
    let digits = &digits[start..end];
    let count = digits.len() as i32;
    if negative {
        out.push(b'-');
    }
    if point <= 0 {
        out.extend_from_slice(b"0.");
        push_zeros(out, -point);
        out.extend_from_slice(digits);
    } else if point < count {
        let (whole, fraction) = digits.split_at(point as usize);
        out.extend_from_slice(whole);
        out.push(b'.');
        out.extend_from_slice(fraction);
    } else {
        out.extend_from_slice(digits);
        push_zeros(out, point - count);
    }
}

/// `x` as [`push_shortest`] writes it, on its own (a value that repeats
/// over the rows of a table, formatted once).
pub fn shortest(x: f64) -> Vec<u8> {
    let mut text = Vec::new();
    push_shortest(&mut text, x);
    text
}

/// Appends `x` like [`push_shortest`], or nothing when it is not finite (an
/// empty CSV field).
pub fn push_finite_or_empty(out: &mut Vec<u8>, x: f64) {
    if x.is_finite() {
        push_shortest(out, x);
    }
}

/// Whether `x` can lie exactly halfway between two shortest candidates,
/// where Ryū and `{}` round differently: its exact decimal expansion ends
/// in a 5 within 18 significant digits (the shortest round-trip text has at
/// most 17). With x = m·2^e (m odd), for e < 0 the expansion is the digits
/// of m·5^(−e), odd and a multiple of 5, so it ends in 5: possible when
/// that is below 10¹⁸ (never for −e > 25, as 5²⁶ > 10¹⁸). For e ≥ 0, x is
/// an integer: its digits without trailing zeros; every integer at or
/// above 2¹²⁸ is reported.
fn may_be_a_tie(x: f64) -> bool {
    const LIMIT: u128 = 1_000_000_000_000_000_000; // 10¹⁸
    let bits = x.to_bits();
    let biased = ((bits >> 52) & 0x7ff) as i32;
    let fraction = bits & ((1u64 << 52) - 1);
    let (mut m, mut e) = if biased == 0 {
        (fraction, -1074)
    } else {
        (fraction | (1u64 << 52), biased - 1075)
    };
    if m == 0 {
        return false;
    }
    let zeros = m.trailing_zeros();
    m >>= zeros;
    e += zeros as i32;
    if e < 0 {
        let q = -e;
        q <= 25 && u128::from(m) * 5u128.pow(q as u32) < LIMIT
    } else if e >= 75 {
        true
    } else {
        let mut n = u128::from(m) << e;
        while n % 10 == 0 {
            n /= 10;
        }
        n % 10 == 5 && n < LIMIT
    }
}

fn push_zeros(out: &mut Vec<u8>, n: i32) {
    out.resize(out.len() + n.max(0) as usize, b'0');
}

/// The exponent `ryu` wrote after the `e`: an optional `-` and digits.
fn parse_exponent(text: &[u8]) -> i32 {
    let (sign, digits) = match text.split_first() {
        Some((b'-', rest)) => (-1, rest),
        _ => (1, text),
    };
    sign * digits
        .iter()
        .fold(0i32, |e, &d| e * 10 + i32::from(d - b'0'))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn text(x: f64) -> String {
        let mut out = Vec::new();
        push_shortest(&mut out, x);
        String::from_utf8(out).unwrap()
    }

    /// Reference: the standard library's `Display` for f64 (shortest
    /// round-trip digits, Grisu with a Dragon4 fallback), which the CSV
    /// tables wrote before. Special values, powers of ten and two across the
    /// whole range, integers near 2⁵³, subnormals, and a million numbers of
    /// random bit patterns, a million of the magnitudes the tables hold and a
    /// million of short binary expansions.
    #[test]
    fn same_text_as_display() {
        let mut specials = vec![
            0.0,
            -0.0,
            1.0,
            -1.0,
            0.1,
            0.3,
            1.5,
            100.0,
            123_456.0,
            9_007_199_254_740_993.0,
            f64::MAX,
            f64::MIN,
            f64::MIN_POSITIVE,
            5e-324,
            -5e-324,
            f64::EPSILON,
            f64::NAN,
            f64::INFINITY,
            f64::NEG_INFINITY,
            14_184_624_142.770_763,
            -69.843_865_708_898_76,
        ];
        for k in -330..=310 {
            specials.push(10f64.powi(k));
            specials.push(-1.5 * 10f64.powi(k));
        }
        for k in -1074..=1023 {
            specials.push(2f64.powi(k));
        }
        for k in 0..2000u64 {
            specials.push(((1u64 << 53) - 1000 + k) as f64);
        }
        // the crate's seeded generator (xoshiro256**, tests in estimate::rng)
        let mut rng = crate::estimate::rng::Rng::new(0x2545_f491_4f6c_dd1d);
        let mut next = || rng.next_u64();
        let mut values = specials;
        for _ in 0..1_000_000 {
            values.push(f64::from_bits(next()));
        }
        for _ in 0..1_000_000 {
            // amplitudes and phases: 1e-3 .. 1e13, either sign
            let u = (next() >> 11) as f64 / (1u64 << 53) as f64;
            let sign = if next() & 1 == 0 { 1.0 } else { -1.0 };
            values.push(sign * 10f64.powf(-3.0 + 16.0 * u));
        }
        for _ in 0..1_000_000 {
            // short binary expansions, where halfway cases lie: m·2^e with
            // m of 1 to 53 bits, e in −80..80
            let bits = 1 + next() % 53;
            let m = (next() >> (64 - bits)) | 1;
            let e = (next() % 161) as i32 - 80;
            values.push(m as f64 * 2f64.powi(e));
        }
        for x in values {
            assert_eq!(text(x), format!("{x}"), "bits {:#x}", x.to_bits());
        }
    }

    #[test]
    fn empty_when_not_finite() {
        let mut out = Vec::new();
        push_finite_or_empty(&mut out, f64::NAN);
        push_finite_or_empty(&mut out, f64::INFINITY);
        assert!(out.is_empty());
        push_finite_or_empty(&mut out, -2.5);
        assert_eq!(out, b"-2.5");
    }
}
