//! Source maps: a pump's Norton parameters measured at several operating
//! conditions (shaft speed × mean pressure), evaluated at the operating
//! point of a circuit.
//!
//! **Interpolation scheme.** The conditions form a grid of mean-pressure
//! *levels* × speeds (conditions whose pressures lie within
//! [`PRESSURE_TOLERANCE_PA`] or [`PRESSURE_TOLERANCE`] of each other are one
//! level, speeds within [`SPEED_TOLERANCE`] one column). A value at speed n
//! and mean pressure p is found harmonic by harmonic, per harmonic order k:
//!
//! 1. along each pressure level, linearly in speed between the two
//!    conditions that bracket n: t = (n − n_a)/(n_b − n_a);
//! 2. between the two levels that bracket p, linearly in pressure, where a
//!    level's pressure at n is its conditions' pressures interpolated with
//!    the same t: s = (p − p_lo(n))/(p_hi(n) − p_lo(n)).
//!
//! On a grid whose conditions sit exactly on common speeds and pressures
//! this is bilinear interpolation; measured speeds and pressures that
//! scatter a little about their nominal values are used as measured, so the
//! map is exact at every one of its conditions.
//!
//! Each step interpolates a complex value X_k in **magnitude and phase**:
//! |X| = (1 − t)|X_a| + t|X_b|, arg X = arg X_a + t·Δ, Δ = arg X_b − arg X_a
//! wrapped into (−π, π] (the shorter way round). Interpolating real and
//! imaginary parts instead would pull the amplitude towards zero between two
//! conditions whose phases differ (to zero for opposite phases), an
//! amplitude dip that no pump shows; the ripple level, which the limits
//! judge, is then linear between the conditions. The same scheme is used
//! between harmonics in frequency by [`ImpedanceTable`](super::ImpedanceTable).
//!
//! The source impedance is a function of frequency (internal volume,
//! leakage, passages: methods.md §5): at speed n the map's per-harmonic
//! values Zs_k(n, p) are placed at k·z·n and interpolated between harmonics
//! in frequency as a source file's table is (magnitude and unwrapped phase,
//! end values held).
//!
//! **Outside the map** the edge values are held (speed clamped along each
//! level, pressure to the outer levels); [`SourceMap::outside`] says so, for
//! a warning naming the operating point and the map's range.
//!
//! **One speed.** A map with a single speed column (one condition, or one
//! speed at several pressures) cannot say how the ripple changes with
//! speed: its flow ripple is scaled in proportion to speed and its
//! impedance kept against frequency, as for a table (common practice: at a
//! fixed displacement the kinematic ripple is a fixed fraction of the mean
//! flow), and [`SourceMap::single_speed`] lets the reports say so.

use num_complex::Complex64 as C64;
use std::f64::consts::{PI, TAU};

/// Speeds within this fraction of each other are one speed of the grid
/// (1 %, common practice for a test-rig drive held at a set speed).
pub const SPEED_TOLERANCE: f64 = 0.01;

/// Mean pressures within this fraction of each other, or within
/// [`PRESSURE_TOLERANCE_PA`], are one pressure level (common practice).
pub const PRESSURE_TOLERANCE: f64 = 0.02;

/// Mean pressures within 1 bar of each other are one level.
pub const PRESSURE_TOLERANCE_PA: f64 = 1e5;

/// One measured condition of a map, in SI.
#[derive(Debug, Clone, PartialEq)]
pub struct MapPoint {
    /// Shaft speed in rev/s.
    pub speed_rev_s: f64,
    /// Mean (gauge) pressure in Pa, if the condition states one (a map of
    /// several conditions needs it on each).
    pub pressure_pa: Option<f64>,
    /// Source flow ripple Qs per harmonic of the map's orders (peak, m³/s).
    pub flow: Vec<C64>,
    /// Source impedance Zs per harmonic (Pa·s/m³).
    pub impedance: Vec<C64>,
}

/// Why a set of conditions is not a map, and which condition (index in the
/// given order) is at fault, if one is.
#[derive(Debug, Clone, PartialEq)]
pub struct MapError {
    /// The condition at fault, if one is.
    pub condition: Option<usize>,
    /// What is wrong.
    pub message: String,
}

/// Where an operating point lies outside a map (beyond the tolerances of
/// the grid), the values being held at the edge.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Outside {
    /// The speed lies below or above the map's speeds.
    pub speed: bool,
    /// The mean pressure lies below or above the map's pressures (or the
    /// map states none and the circuit does, or the other way round).
    pub pressure: bool,
}

/// A pump's source map, evaluated at one mean pressure (the circuit's).
#[derive(Debug, Clone, PartialEq)]
pub struct SourceMap {
    pumping_elements: u32,
    orders: Vec<u32>,
    /// Pressure levels in increasing pressure, each in increasing speed.
    levels: Vec<Vec<MapPoint>>,
    /// The mean pressure the map is evaluated at (Pa, gauge), if known.
    pressure_pa: Option<f64>,
    /// Shaft angle (rad) of the pump's reference mark: harmonic k is turned
    /// by −k·z·angle.
    shaft_angle_rad: f64,
    /// Factors on |Qs| and |Zs| per order (1 as written; uncertainty draws
    /// change them).
    flow_scale: Vec<f64>,
    impedance_scale: Vec<f64>,
}

/// How a value at an operating point is made from the map's conditions:
/// per level (low, high) the two conditions and the fraction t between
/// them, and the fraction s between the levels.
#[derive(Debug, Clone, Copy)]
struct Stencil {
    sides: [(usize, usize, usize, f64); 2],
    s: f64,
}

/// Linear interpolation of a complex value in magnitude and phase (the
/// phase the shorter way round); exact at t = 0 and t = 1.
pub fn lerp_polar(a: C64, b: C64, t: f64) -> C64 {
    if t == 0.0 {
        return a;
    }
    if t == 1.0 {
        return b;
    }
    let mut d = b.arg() - a.arg();
    if d > PI {
        d -= TAU;
    } else if d <= -PI {
        d += TAU;
    }
    C64::from_polar((1.0 - t) * a.norm() + t * b.norm(), a.arg() + t * d)
}

fn lerp(a: f64, b: f64, t: f64) -> f64 {
    if t == 0.0 { a } else { a + t * (b - a) }
}

/// Whether two mean pressures are one level of a map.
pub fn same_pressure(a: f64, b: f64) -> bool {
    (a - b).abs() <= PRESSURE_TOLERANCE_PA.max(PRESSURE_TOLERANCE * a.abs().max(b.abs()))
}

/// Whether two speeds are one speed of a map.
pub fn same_speed(a: f64, b: f64) -> bool {
    (a - b).abs() <= SPEED_TOLERANCE * a.abs().max(b.abs())
}

/// A pressure in bar with at most four decimals, trailing zeros dropped.
pub fn bar(pressure_pa: f64) -> String {
    let s = format!("{:.4}", pressure_pa / 1e5);
    let s = s.trim_end_matches('0').trim_end_matches('.');
    format!("{s} bar")
}

/// "1500 rpm" or "1500 rpm, 100 bar".
pub fn describe_point(speed_rev_s: f64, pressure_pa: Option<f64>) -> String {
    match pressure_pa {
        Some(p) => format!("{:.0} rpm, {}", speed_rev_s * 60.0, bar(p)),
        None => format!("{:.0} rpm", speed_rev_s * 60.0),
    }
}

impl SourceMap {
    /// Builds a map of a pump with `pumping_elements` from its conditions,
    /// each listing the harmonic `orders` (increasing).
    ///
    /// # Errors
    /// [`MapError`] when there are no conditions, a condition's lists do not
    /// match the orders, several conditions lack a mean pressure, two
    /// conditions are one point of the grid (duplicates), or the grid has a
    /// missing point (a speed measured at one pressure level and not at
    /// another).
    pub fn new(
        pumping_elements: u32,
        orders: Vec<u32>,
        points: Vec<MapPoint>,
    ) -> Result<Self, MapError> {
        let fail = |condition: Option<usize>, message: String| MapError { condition, message };
        if points.is_empty() {
            return Err(fail(None, "the map holds no condition".into()));
        }
        for (i, p) in points.iter().enumerate() {
            if p.flow.len() != orders.len() || p.impedance.len() != orders.len() {
                return Err(fail(
                    Some(i),
                    format!(
                        "lists {} harmonics where the map has {}: every condition lists the same harmonics",
                        p.flow.len(),
                        orders.len()
                    ),
                ));
            }
            if points.len() > 1 && p.pressure_pa.is_none() {
                return Err(fail(
                    Some(i),
                    "has no mean `pressure`: every condition of a map of several conditions states its speed and mean pressure".into(),
                ));
            }
        }
        // Pressure levels: by increasing pressure, a new level when a
        // pressure is beyond the tolerance of the level's first one.
        let mut by_pressure: Vec<usize> = (0..points.len()).collect();
        let pressure = |i: usize| points[i].pressure_pa.unwrap_or(0.0);
        by_pressure.sort_by(|&a, &b| pressure(a).total_cmp(&pressure(b)));
        let mut level_of = vec![0usize; points.len()];
        let mut level_first: Vec<usize> = Vec::new();
        for &i in &by_pressure {
            match level_first.last() {
                Some(&f) if same_pressure(pressure(f), pressure(i)) => {}
                _ => level_first.push(i),
            }
            level_of[i] = level_first.len() - 1;
        }
        // Speed columns likewise.
        let mut by_speed: Vec<usize> = (0..points.len()).collect();
        by_speed.sort_by(|&a, &b| points[a].speed_rev_s.total_cmp(&points[b].speed_rev_s));
        let mut column_of = vec![0usize; points.len()];
        let mut column_first: Vec<usize> = Vec::new();
        for &i in &by_speed {
            match column_first.last() {
                Some(&f) if same_speed(points[f].speed_rev_s, points[i].speed_rev_s) => {}
                _ => column_first.push(i),
            }
            column_of[i] = column_first.len() - 1;
        }
        let mut cell: Vec<Vec<Option<usize>>> =
            vec![vec![None; column_first.len()]; level_first.len()];
        for i in 0..points.len() {
            let slot = &mut cell[level_of[i]][column_of[i]];
            if let Some(j) = *slot {
                return Err(fail(
                    Some(i.max(j)),
                    format!(
                        "condition {} ({}) repeats condition {} ({}): speeds within {:.0} % and mean pressures within {:.0} bar or {:.0} % are one point of the map",
                        i.max(j) + 1,
                        describe_point(points[i.max(j)].speed_rev_s, points[i.max(j)].pressure_pa),
                        i.min(j) + 1,
                        describe_point(points[i.min(j)].speed_rev_s, points[i.min(j)].pressure_pa),
                        SPEED_TOLERANCE * 100.0,
                        PRESSURE_TOLERANCE_PA / 1e5,
                        PRESSURE_TOLERANCE * 100.0
                    ),
                ));
            }
            *slot = Some(i);
        }
        for (l, row) in cell.iter().enumerate() {
            if let Some(c) = row.iter().position(Option::is_none) {
                let speeds: Vec<String> = column_first
                    .iter()
                    .map(|&f| format!("{:.0}", points[f].speed_rev_s * 60.0))
                    .collect();
                return Err(fail(
                    None,
                    format!(
                        "the map is not a full grid: no condition at about {} (every mean pressure needs every speed: {} rpm)",
                        describe_point(
                            points[column_first[c]].speed_rev_s,
                            points[level_first[l]].pressure_pa
                        ),
                        speeds.join(", ")
                    ),
                ));
            }
        }
        let levels: Vec<Vec<MapPoint>> = cell
            .into_iter()
            .map(|row| {
                row.into_iter()
                    .flatten()
                    .map(|i| points[i].clone())
                    .collect()
            })
            .collect();
        let n = orders.len();
        Ok(SourceMap {
            pumping_elements,
            orders,
            levels,
            pressure_pa: None,
            shaft_angle_rad: 0.0,
            flow_scale: vec![1.0; n],
            impedance_scale: vec![1.0; n],
        })
    }

    /// The map evaluated at mean pressure `pressure_pa` (gauge Pa; `None`
    /// when the circuit states none, which a map of several pressure levels
    /// cannot be evaluated without: see [`SourceMap::needs_pressure`]).
    pub fn at_pressure(mut self, pressure_pa: Option<f64>) -> Self {
        self.pressure_pa = pressure_pa;
        self
    }

    /// The same map for a pump mounted at shaft angle `angle_rad`.
    pub fn rotated(mut self, angle_rad: f64) -> Self {
        self.shaft_angle_rad += angle_rad;
        self
    }

    /// Whether the map has several pressure levels (and so needs the
    /// circuit's mean pressure).
    pub fn needs_pressure(&self) -> bool {
        self.levels.len() > 1
    }

    /// Whether the map has a single speed column: its flow ripple is then
    /// scaled in proportion to speed.
    pub fn single_speed(&self) -> bool {
        self.levels[0].len() == 1
    }

    /// Number of conditions.
    pub fn conditions(&self) -> usize {
        self.levels.iter().map(Vec::len).sum()
    }

    /// Whether harmonic `order` has source flow at any condition.
    pub fn lists_flow(&self, order: u32) -> bool {
        self.orders
            .iter()
            .position(|&k| k == order)
            .is_some_and(|j| {
                self.levels
                    .iter()
                    .flatten()
                    .any(|p| p.flow[j] != C64::new(0.0, 0.0))
            })
    }

    /// The harmonic orders the map lists.
    pub fn orders(&self) -> &[u32] {
        &self.orders
    }

    /// The lowest and highest speed of the map in rev/s.
    pub fn speed_range_rev_s(&self) -> (f64, f64) {
        let all = self.levels.iter().flatten().map(|p| p.speed_rev_s);
        let lo = all.clone().fold(f64::INFINITY, f64::min);
        (lo, all.fold(f64::NEG_INFINITY, f64::max))
    }

    /// The lowest and highest mean pressure of the map in Pa, if it states
    /// them.
    pub fn pressure_range_pa(&self) -> Option<(f64, f64)> {
        let all: Vec<f64> = self
            .levels
            .iter()
            .flatten()
            .filter_map(|p| p.pressure_pa)
            .collect();
        (!all.is_empty()).then(|| {
            (
                all.iter().copied().fold(f64::INFINITY, f64::min),
                all.iter().copied().fold(f64::NEG_INFINITY, f64::max),
            )
        })
    }

    /// The mean pressure the map is evaluated at, if known.
    pub fn pressure_pa(&self) -> Option<f64> {
        self.pressure_pa
    }

    /// The map's range in words: "800 .. 2400 rpm, 50 .. 200 bar".
    pub fn describe_range(&self) -> String {
        let (lo, hi) = self.speed_range_rev_s();
        let speeds = if self.single_speed() {
            format!("{:.0} rpm", lo * 60.0)
        } else {
            format!("{:.0} .. {:.0} rpm", lo * 60.0, hi * 60.0)
        };
        match self.pressure_range_pa() {
            Some((a, b)) if same_pressure(a, b) => format!("{speeds}, {}", bar(a)),
            Some((a, b)) => format!(
                "{speeds}, {} .. {}",
                bar(a).trim_end_matches(" bar"),
                bar(b)
            ),
            None => speeds,
        }
    }

    /// Factor `factor` on |Qs| of harmonic `order` at every condition (an
    /// uncertainty draw); an order the map does not list is left.
    pub fn scale_flow(&mut self, order: u32, factor: f64) {
        if let Some(j) = self.orders.iter().position(|&k| k == order) {
            self.flow_scale[j] = factor;
        }
    }

    /// Factor `factor` on |Zs| of harmonic `order` at every condition.
    pub fn scale_impedance(&mut self, order: u32, factor: f64) {
        if let Some(j) = self.orders.iter().position(|&k| k == order) {
            self.impedance_scale[j] = factor;
        }
    }

    /// The stencil at speed `speed_rev_s` and the map's pressure.
    fn stencil(&self, speed_rev_s: f64) -> Stencil {
        let along = |level: &[MapPoint]| -> (usize, usize, f64) {
            let i = level.partition_point(|q| q.speed_rev_s < speed_rev_s);
            if i == level.len() {
                (i - 1, i - 1, 0.0)
            } else if i == 0 || level[i].speed_rev_s == speed_rev_s {
                (i, i, 0.0)
            } else {
                let (a, b) = (level[i - 1].speed_rev_s, level[i].speed_rev_s);
                (i - 1, i, (speed_rev_s - a) / (b - a))
            }
        };
        let level_pressure = |l: usize| {
            let (a, b, t) = along(&self.levels[l]);
            let p = |i: usize| self.levels[l][i].pressure_pa.unwrap_or(0.0);
            (lerp(p(a), p(b), t), (l, a, b, t))
        };
        let last = self.levels.len() - 1;
        let (p0, side0) = level_pressure(0);
        let Some(p) = self.pressure_pa.filter(|_| last > 0) else {
            return Stencil {
                sides: [side0, side0],
                s: 0.0,
            };
        };
        if p <= p0 {
            return Stencil {
                sides: [side0, side0],
                s: 0.0,
            };
        }
        let mut lower = (p0, side0);
        for l in 1..=last {
            let upper = level_pressure(l);
            if p == upper.0 {
                return Stencil {
                    sides: [upper.1, upper.1],
                    s: 0.0,
                };
            }
            if p < upper.0 {
                return Stencil {
                    sides: [lower.1, upper.1],
                    s: (p - lower.0) / (upper.0 - lower.0),
                };
            }
            lower = upper;
        }
        Stencil {
            sides: [lower.1, lower.1],
            s: 0.0,
        }
    }

    /// The speed the map's values hold at: `speed_rev_s` itself, or for a
    /// single speed column the column's speed (interpolated between the
    /// levels), at which its flow is scaled in proportion.
    fn held_speed(&self, st: &Stencil, speed_rev_s: f64) -> f64 {
        if !self.single_speed() {
            return speed_rev_s;
        }
        let n = |(l, a, b, t): (usize, usize, usize, f64)| {
            lerp(
                self.levels[l][a].speed_rev_s,
                self.levels[l][b].speed_rev_s,
                t,
            )
        };
        lerp(n(st.sides[0]), n(st.sides[1]), st.s)
    }

    /// A per-order value through the stencil.
    fn combine(&self, st: &Stencil, get: impl Fn(&MapPoint) -> C64) -> C64 {
        let side = |(l, a, b, t): (usize, usize, usize, f64)| {
            lerp_polar(get(&self.levels[l][a]), get(&self.levels[l][b]), t)
        };
        lerp_polar(side(st.sides[0]), side(st.sides[1]), st.s)
    }

    /// Source flow ripple Qs of harmonic `order` at shaft speed
    /// `speed_rev_s` and the map's pressure (zero for an order the map does
    /// not list): interpolated (see the module documentation), held at the
    /// edges, or in proportion to speed for a single speed column; phases
    /// against the shaft angle.
    pub fn flow(&self, order: u32, speed_rev_s: f64) -> C64 {
        let Some(j) = self.orders.iter().position(|&k| k == order) else {
            return C64::new(0.0, 0.0);
        };
        let st = self.stencil(speed_rev_s);
        let q = self.combine(&st, |p| p.flow[j]) * self.flow_scale[j];
        let q = if self.single_speed() {
            q * (speed_rev_s / self.held_speed(&st, speed_rev_s))
        } else {
            q
        };
        if self.shaft_angle_rad == 0.0 {
            return q;
        }
        q * C64::from_polar(
            1.0,
            -f64::from(order * self.pumping_elements) * self.shaft_angle_rad,
        )
    }

    /// Source impedance Zs at `freq_hz` with the shaft at `speed_rev_s`:
    /// the per-harmonic values at that speed (held at the edges; at the
    /// column's speed for a single speed column) placed at k·z·n and
    /// interpolated between harmonics in magnitude and phase, end values
    /// held.
    pub fn impedance(&self, freq_hz: f64, speed_rev_s: f64) -> C64 {
        let st = self.stencil(speed_rev_s);
        let fp = self.held_speed(&st, speed_rev_s) * f64::from(self.pumping_elements);
        let at = |j: usize| self.combine(&st, |p| p.impedance[j]) * self.impedance_scale[j];
        let f = |j: usize| f64::from(self.orders[j]) * fp;
        let i = (0..self.orders.len()).find(|&j| f(j) >= freq_hz);
        match i {
            None => at(self.orders.len() - 1),
            Some(0) => at(0),
            Some(i) if f(i) == freq_hz => at(i),
            Some(i) => lerp_polar(at(i - 1), at(i), (freq_hz - f(i - 1)) / (f(i) - f(i - 1))),
        }
    }

    /// Whether the operating point (speed, the map's pressure) lies outside
    /// the map beyond the grid's tolerances.
    pub fn outside(&self, speed_rev_s: f64) -> Outside {
        let (lo, hi) = self.speed_range_rev_s();
        let speed = !self.single_speed()
            && ((speed_rev_s < lo && !same_speed(speed_rev_s, lo))
                || (speed_rev_s > hi && !same_speed(speed_rev_s, hi)));
        let pressure = match (self.pressure_range_pa(), self.pressure_pa) {
            (Some((a, b)), Some(p)) => {
                (p < a && !same_pressure(p, a)) || (p > b && !same_pressure(p, b))
            }
            (None, None) => false,
            (Some(_), None) => self.needs_pressure(),
            (None, Some(_)) => false,
        };
        Outside { speed, pressure }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn point(rpm: f64, bar: f64, flow: &[C64], imp: &[C64]) -> MapPoint {
        MapPoint {
            speed_rev_s: rpm / 60.0,
            pressure_pa: Some(bar * 1e5),
            flow: flow.to_vec(),
            impedance: imp.to_vec(),
        }
    }

    fn c(re: f64, im: f64) -> C64 {
        C64::new(re, im)
    }

    /// A 2 × 2 grid with one harmonic: flow amplitude a(n, p) given at the
    /// corners, phases chosen so that the shorter way round crosses ±180°.
    fn grid() -> SourceMap {
        let q = |amp: f64, deg: f64| C64::from_polar(amp, deg.to_radians());
        let z = |amp: f64| C64::from_polar(amp, -80f64.to_radians());
        SourceMap::new(
            9,
            vec![1],
            vec![
                point(1000.0, 100.0, &[q(1.0e-5, 170.0)], &[z(1e10)]),
                point(2000.0, 100.0, &[q(3.0e-5, -170.0)], &[z(2e10)]),
                point(1000.0, 200.0, &[q(2.0e-5, 10.0)], &[z(3e10)]),
                point(2000.0, 200.0, &[q(5.0e-5, 30.0)], &[z(4e10)]),
            ],
        )
        .unwrap()
    }

    #[test]
    fn exact_at_the_points_and_bilinear_between() {
        // Exact at every condition: the same bits as written.
        let src = grid();
        for (rpm, bar) in [
            (1000.0, 100.0),
            (2000.0, 100.0),
            (1000.0, 200.0),
            (2000.0, 200.0),
        ] {
            let m = src.clone().at_pressure(Some(bar * 1e5));
            let want = src.levels[usize::from(bar > 150.0)][usize::from(rpm > 1500.0)].flow[0];
            assert_eq!(m.flow(1, rpm / 60.0), want);
            assert!(m.outside(rpm / 60.0) == Outside::default());
        }
        // Between: the bilinear closed form of the amplitude,
        // a(u, v) = (1−u)(1−v)a00 + u(1−v)a10 + (1−u)v a01 + uv a11,
        // at u = 0.25 (1250 rpm), v = 0.6 (160 bar).
        let m = src.clone().at_pressure(Some(160e5));
        let (u, v) = (0.25, 0.6);
        let want = (1.0 - u) * (1.0 - v) * 1e-5
            + u * (1.0 - v) * 3e-5
            + (1.0 - u) * v * 2e-5
            + u * v * 5e-5;
        let got = m.flow(1, 1250.0 / 60.0);
        assert!((got.norm() - want).abs() < 1e-15, "{} {want}", got.norm());
        // Phase: along 100 bar from 170° the shorter way (+20°) to 190°:
        // 175°; along 200 bar 10° → 30°: 15°; then 175° → 15° by the
        // shorter way (−160°) at v = 0.6: 175 − 96 = 79°.
        assert!(
            (got.arg().to_degrees() - 79.0).abs() < 1e-9,
            "{}",
            got.arg().to_degrees()
        );
        // Linear along a level: at 100 bar halfway, |Q| = 2e-5 at 180°.
        let m = src.clone().at_pressure(Some(100e5));
        let got = m.flow(1, 1500.0 / 60.0);
        assert!((got - C64::new(-2e-5, 0.0)).norm() < 1e-18, "{got}");
        // The impedance at its harmonic's frequency k·z·n follows the same
        // scheme: |Zs| halfway along 200 bar is 3.5e10.
        let m = src.at_pressure(Some(200e5));
        let z = m.impedance(9.0 * 25.0, 25.0);
        assert!((z.norm() - 3.5e10).abs() < 1e-3 && (z.arg().to_degrees() + 80.0).abs() < 1e-9);
    }

    #[test]
    fn edges_are_held_and_flagged() {
        let m = grid().at_pressure(Some(300e5));
        let edge = grid().at_pressure(Some(200e5));
        assert_eq!(m.flow(1, 2500.0 / 60.0), edge.flow(1, 2000.0 / 60.0));
        assert_eq!(
            m.outside(2500.0 / 60.0),
            Outside {
                speed: true,
                pressure: true
            }
        );
        // Within the tolerances: held, not flagged.
        let m = grid().at_pressure(Some(99.5e5));
        assert_eq!(m.outside(1005.0 / 60.0), Outside::default());
        assert_eq!(m.flow(1, 990.0 / 60.0), grid().levels[0][0].flow[0]);
        // A map of several pressures needs the circuit's.
        assert!(grid().outside(20.0).pressure);
    }

    #[test]
    fn one_speed_scales_in_proportion() {
        let q = c(1e-5, -2e-6);
        let m = SourceMap::new(
            9,
            vec![1, 2],
            vec![MapPoint {
                speed_rev_s: 25.0,
                pressure_pa: None,
                flow: vec![q, c(0.0, 0.0)],
                impedance: vec![c(1e8, -1e10), c(5e7, -5e9)],
            }],
        )
        .unwrap();
        assert!(m.single_speed() && !m.needs_pressure());
        assert_eq!(m.flow(1, 25.0), q);
        assert!((m.flow(1, 30.0) - q * 1.2).norm() < 1e-20);
        // Rotated by the shaft angle: −k·z·angle.
        let r = m.clone().rotated(0.1);
        assert!((r.flow(1, 25.0) - q * C64::from_polar(1.0, -0.9)).norm() < 1e-20);
        // The impedance is a table against frequency at the measured speed:
        // at 30 rev/s harmonic 1 sits at 270 Hz, between 225 and 450 Hz.
        let z = m.impedance(270.0, 30.0);
        let want = lerp_polar(c(1e8, -1e10), c(5e7, -5e9), 45.0 / 225.0);
        assert!((z - want).norm() < 1e-6 * want.norm());
        assert!(!m.outside(40.0).speed);
    }

    #[test]
    fn duplicates_and_holes_are_refused() {
        let one = [c(1e-5, 0.0)];
        let z = [c(0.0, -1e10)];
        let err = SourceMap::new(
            9,
            vec![1],
            vec![
                point(1000.0, 100.0, &one, &z),
                point(2000.0, 100.0, &one, &z),
                point(1005.0, 100.5, &one, &z),
            ],
        )
        .unwrap_err();
        assert_eq!(err.condition, Some(2));
        assert!(
            err.message.contains("repeats condition 1"),
            "{}",
            err.message
        );
        let err = SourceMap::new(
            9,
            vec![1],
            vec![
                point(1000.0, 100.0, &one, &z),
                point(2000.0, 100.0, &one, &z),
                point(1000.0, 200.0, &one, &z),
            ],
        )
        .unwrap_err();
        assert!(
            err.message.contains("not a full grid") && err.message.contains("2000 rpm, 200 bar"),
            "{}",
            err.message
        );
        let err = SourceMap::new(9, vec![1, 2], vec![point(1000.0, 100.0, &one, &z)]).unwrap_err();
        assert!(err.message.contains("same harmonics"), "{}", err.message);
    }
}
