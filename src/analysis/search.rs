//! Small derivative-free searches used by the analyses: golden-section
//! search on an interval, a Halton space-filling design, and the
//! Nelder–Mead simplex method in a box.
//!
//! They are written here rather than taken from an optimisation crate
//! because the problems are tiny (one to three variables, evaluations that
//! cost a network solve) and the crates that offer them pull dependencies
//! the project avoids (DEVELOPERS.md, "Dependencies and why").

/// The result of a golden-section search.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GoldenResult {
    /// Where the better of the last two interior points lies.
    pub x: f64,
    /// The value there.
    pub value: f64,
    /// Whether the bracket shrank below the tolerance.
    pub converged: bool,
    /// Function evaluations used.
    pub evaluations: usize,
}

/// Golden-section search for the minimum of a function that is unimodal on
/// [a, b] (Kiefer 1953; Press et al., *Numerical Recipes*, 3rd ed., §10.2):
/// each step shrinks the bracket by 0.618, until it is narrower than
/// `rel_tol`·|b| or after `max_steps` steps.
pub fn golden_section_min(
    mut f: impl FnMut(f64) -> f64,
    mut a: f64,
    mut b: f64,
    rel_tol: f64,
    max_steps: usize,
) -> GoldenResult {
    let r = (5f64.sqrt() - 1.0) / 2.0;
    let mut c = b - r * (b - a);
    let mut d = a + r * (b - a);
    let (mut fc, mut fd) = (f(c), f(d));
    let mut evaluations = 2;
    let mut converged = false;
    for _ in 0..max_steps {
        if b - a <= rel_tol * b.abs() {
            converged = true;
            break;
        }
        if fc <= fd {
            b = d;
            (d, fd) = (c, fc);
            c = b - r * (b - a);
            fc = f(c);
        } else {
            a = c;
            (c, fc) = (d, fd);
            d = a + r * (b - a);
            fd = f(d);
        }
        evaluations += 1;
    }
    let (x, value) = if fc <= fd { (c, fc) } else { (d, fd) };
    GoldenResult {
        x,
        value,
        converged,
        evaluations,
    }
}

/// Golden-section search for the maximum of a function that is unimodal on
/// [a, b]: [`golden_section_min`] of −f for `iterations` steps; returns the
/// better of the two last interior points as (x, f(x)).
pub fn golden_section_max(
    mut f: impl FnMut(f64) -> f64,
    a: f64,
    b: f64,
    iterations: usize,
) -> (f64, f64) {
    let r = golden_section_min(|x| -f(x), a, b, 0.0, iterations);
    (r.x, -r.value)
}

/// The i-th point (i ≥ 1) of the Halton sequence in `dims` ≤ 3 dimensions,
/// in [0, 1)^dims: the radical inverses of i in the bases 2, 3 and 5
/// (Halton 1960). Successive points fill the unit cube evenly, so a prefix
/// of any length is a space-filling design.
pub fn halton(i: usize, dims: usize) -> Vec<f64> {
    const BASES: [usize; 3] = [2, 3, 5];
    BASES[..dims]
        .iter()
        .map(|&base| {
            let (mut n, mut f, mut x) = (i, 1.0, 0.0);
            while n > 0 {
                f /= base as f64;
                x += f * (n % base) as f64;
                n /= base;
            }
            x
        })
        .collect()
}

/// Minimises `f` over the unit box [0, 1]^n by the Nelder–Mead simplex
/// method (Nelder & Mead 1965, with the standard coefficients: reflection 1,
/// expansion 2, contraction ½, shrink ½), starting from a simplex of edge
/// `step` at `start`. Trial points are clamped into the box. Stops when the
/// simplex's largest edge is below `tolerance` or after `max_evaluations`.
/// Returns the best point and its value.
pub fn nelder_mead_in_box(
    mut f: impl FnMut(&[f64]) -> f64,
    start: &[f64],
    step: f64,
    tolerance: f64,
    max_evaluations: usize,
) -> (Vec<f64>, f64) {
    let n = start.len();
    let clamp = |x: Vec<f64>| -> Vec<f64> { x.into_iter().map(|v| v.clamp(0.0, 1.0)).collect() };
    let mut simplex: Vec<(Vec<f64>, f64)> = Vec::with_capacity(n + 1);
    let x0 = clamp(start.to_vec());
    let f0 = f(&x0);
    simplex.push((x0.clone(), f0));
    for i in 0..n {
        let mut x = x0.clone();
        // Step inwards when the start sits on the upper face.
        x[i] = if x[i] + step <= 1.0 {
            x[i] + step
        } else {
            x[i] - step
        };
        let x = clamp(x);
        let fx = f(&x);
        simplex.push((x, fx));
    }
    let mut evaluations = n + 1;
    let order = |s: &mut Vec<(Vec<f64>, f64)>| {
        s.sort_by(|a, b| a.1.partial_cmp(&b.1).unwrap_or(std::cmp::Ordering::Equal))
    };
    loop {
        order(&mut simplex);
        let size = simplex[1..]
            .iter()
            .map(|(x, _)| {
                x.iter()
                    .zip(&simplex[0].0)
                    .map(|(a, b)| (a - b).abs())
                    .fold(0.0, f64::max)
            })
            .fold(0.0, f64::max);
        if size < tolerance || evaluations >= max_evaluations {
            break;
        }
        let centroid: Vec<f64> = (0..n)
            .map(|j| simplex[..n].iter().map(|(x, _)| x[j]).sum::<f64>() / n as f64)
            .collect();
        let worst = simplex[n].clone();
        let along = |t: f64| -> Vec<f64> {
            clamp(
                centroid
                    .iter()
                    .zip(&worst.0)
                    .map(|(c, w)| c + t * (c - w))
                    .collect(),
            )
        };
        let xr = along(1.0);
        let fr = f(&xr);
        evaluations += 1;
        if fr < simplex[0].1 {
            let xe = along(2.0);
            let fe = f(&xe);
            evaluations += 1;
            simplex[n] = if fe < fr { (xe, fe) } else { (xr, fr) };
        } else if fr < simplex[n - 1].1 {
            simplex[n] = (xr, fr);
        } else {
            let (xc, fc) = if fr < worst.1 {
                let x = along(0.5);
                let v = f(&x);
                (x, v)
            } else {
                let x = along(-0.5);
                let v = f(&x);
                (x, v)
            };
            evaluations += 1;
            if fc < worst.1.min(fr) {
                simplex[n] = (xc, fc);
            } else {
                let best = simplex[0].0.clone();
                for vertex in simplex.iter_mut().skip(1) {
                    let x: Vec<f64> = vertex
                        .0
                        .iter()
                        .zip(&best)
                        .map(|(v, b)| b + 0.5 * (v - b))
                        .collect();
                    let fx = f(&x);
                    *vertex = (x, fx);
                    evaluations += 1;
                }
            }
        }
    }
    order(&mut simplex);
    simplex.swap_remove(0)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn golden_section_finds_the_top_of_a_parabola() {
        let (x, fx) = golden_section_max(|x| -(x - 0.3).powi(2) + 2.0, -1.0, 1.0, 80);
        // x is found to about √ε: the function is flat to round-off there.
        assert!((x - 0.3).abs() < 1e-7 && (fx - 2.0).abs() < 1e-15, "{x}");
    }

    // Halton (1960): radical inverse in base 2 of 1, 2, 3 is 1/2, 1/4, 3/4;
    // in base 3 it is 1/3, 2/3, 1/9.
    #[test]
    fn halton_points_are_radical_inverses() {
        assert_eq!(halton(1, 3), vec![0.5, 1.0 / 3.0, 0.2]);
        assert_eq!(halton(2, 2), vec![0.25, 2.0 / 3.0]);
        assert_eq!(halton(3, 2), vec![0.75, 1.0 / 9.0]);
    }

    // Rosenbrock's function (Rosenbrock 1960), minimum 0 at (1, 1), mapped
    // into the unit box as x = 4u − 2.
    #[test]
    fn nelder_mead_finds_the_rosenbrock_valley_minimum() {
        let f = |u: &[f64]| {
            let (x, y) = (4.0 * u[0] - 2.0, 4.0 * u[1] - 2.0);
            (1.0 - x).powi(2) + 100.0 * (y - x * x).powi(2)
        };
        let (u, fu) = nelder_mead_in_box(f, &[0.2, 0.8], 0.1, 1e-10, 5000);
        assert!(fu < 1e-12, "{fu}");
        assert!((4.0 * u[0] - 2.0 - 1.0).abs() < 1e-5 && (4.0 * u[1] - 2.0 - 1.0).abs() < 1e-5);
    }

    #[test]
    fn nelder_mead_stays_in_the_box() {
        // The unconstrained minimum (−1, 2) lies outside; the box minimum is (0, 1).
        let f = |u: &[f64]| (u[0] + 1.0).powi(2) + (u[1] - 2.0).powi(2);
        let (u, _) = nelder_mead_in_box(f, &[0.5, 0.5], 0.1, 1e-9, 2000);
        assert!(u[0].abs() < 1e-6 && (u[1] - 1.0).abs() < 1e-6, "{u:?}");
    }
}
