//! Uniform liquid-filled lines as frequency-domain two-ports.
//!
//! A line of length l carries plane waves P(x) = F e^{−Γx} + G e^{+Γx} with
//! the propagation coefficient Γ = √(Z'Y') (Re Γ ≥ 0) and the characteristic
//! impedance Zc = Z'/Γ, where Z' and Y' are the series impedance and shunt
//! admittance per unit length (methods.md §2.1). Two models of Z' are offered
//! ([`LineModel`]):
//!
//! * lossless: Z' = jωρ/A, Y' = jωA/B → Γ = jω/c0, Zc = ρc0/A;
//! * laminar (default): Z' = jωρ/(A(1 − F)) with the exact viscous factor F
//!   of [`viscous`] (Womersley 1955; Brown 1962), Y' = jωA/B;
//! * turbulent: the laminar Z' plus the linearised turbulent-friction
//!   correction ΔR' of the line's mean flow where it is turbulent
//!   ([`turbulence`], methods.md §2.5); it vanishes below the transition.
//!
//! B is the effective bulk modulus of liquid and wall together (see
//! [`crate::wall`]). A hose adds a complex, frequency-dependent wall
//! compliance J_w(ω) ([`crate::hose`]): Y' = jωA (1/B + J_w(ω)). The two-port is evaluated in the admittance form with
//! E = e^{−Γl} (|E| ≤ 1), which never overflows for long lossy lines:
//!
//! ```text
//! [Qa]        1  [ (1+E²)/(1−E²)   −2E/(1−E²)  ] [Pa]
//! [Qb]  =  ——— · [ −2E/(1−E²)     (1+E²)/(1−E²)] [Pb]     (flows leaving each node)
//!           Zc
//! ```

pub mod turbulence;
pub mod viscous;

use crate::hose::ViscoelasticWall;
use num_complex::Complex64 as C64;

const J: C64 = C64 { re: 0.0, im: 1.0 };

/// How the series impedance of a line is modelled at each frequency.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
#[non_exhaustive]
pub enum LineModel {
    /// No friction: Γ = jω/c0, Zc = ρc0/A.
    Lossless,
    /// Exact laminar oscillating-flow friction (frequency-dependent).
    #[default]
    Laminar,
    /// Laminar friction plus the linearised turbulent correction of the
    /// line's mean flow where Re > 2300 ([`turbulence`]).
    Turbulent,
}

impl LineModel {
    /// The name used in circuit files.
    pub fn name(self) -> &'static str {
        match self {
            LineModel::Lossless => "lossless",
            LineModel::Laminar => "laminar",
            LineModel::Turbulent => "turbulent",
        }
    }
}

/// The mean (steady) flow through a line, a→b positive, in m³/s.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub enum MeanFlow {
    /// Not known (no pump displacement, or no path to tank).
    #[default]
    Unknown,
    /// Given for this line in the circuit file.
    Given(f64),
    /// The pumps' displacement × speed, split by the circuit ([`crate::meanflow`]).
    FromPumps(f64),
}

impl MeanFlow {
    /// The flow in m³/s, if known.
    pub fn flow_m3_s(self) -> Option<f64> {
        match self {
            MeanFlow::Unknown => None,
            MeanFlow::Given(q) | MeanFlow::FromPumps(q) => Some(q),
        }
    }
}

/// The properties of a uniform line that its wave propagation depends on.
///
/// Two values are equal (`==`) when they propagate waves identically: the
/// mean flow is compared only under [`LineModel::Turbulent`], the one model
/// it changes. The network evaluates each distinct line once per frequency,
/// so two equal tubes that carry the same flow by different round-off stay
/// one line.
#[derive(Debug, Clone, Copy)]
pub struct LineProperties {
    /// Bore radius r in m.
    pub radius_m: f64,
    /// Liquid density ρ in kg/m³.
    pub density_kg_m3: f64,
    /// Liquid kinematic viscosity ν in m²/s.
    pub kinematic_viscosity_m2_s: f64,
    /// Effective bulk modulus of liquid and elastic wall, 1/B = 1/B_liquid +
    /// 1/B_wall, in Pa. For a hose, the liquid's modulus alone (its wall is
    /// `viscoelastic_wall`).
    pub effective_bulk_modulus_pa: f64,
    /// Friction model.
    pub model: LineModel,
    /// A hose's viscoelastic wall compliance, added to 1/B at each
    /// frequency; `None` for tubes.
    pub viscoelastic_wall: Option<ViscoelasticWall>,
    /// The line's mean flow (used by the turbulent model).
    pub mean_flow: MeanFlow,
}

impl PartialEq for LineProperties {
    fn eq(&self, other: &Self) -> bool {
        self.radius_m == other.radius_m
            && self.density_kg_m3 == other.density_kg_m3
            && self.kinematic_viscosity_m2_s == other.kinematic_viscosity_m2_s
            && self.effective_bulk_modulus_pa == other.effective_bulk_modulus_pa
            && self.model == other.model
            && self.viscoelastic_wall == other.viscoelastic_wall
            && (self.model != LineModel::Turbulent || self.mean_flow == other.mean_flow)
    }
}

/// Γ and Zc of a line at one frequency.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Propagation {
    /// Propagation coefficient Γ in 1/m (Re Γ ≥ 0: attenuation; Im Γ: ω/phase speed).
    pub gamma: C64,
    /// Characteristic impedance Zc in Pa·s/m³.
    pub zc: C64,
}

impl LineProperties {
    /// Bore area A = πr² in m².
    pub fn area_m2(&self) -> f64 {
        std::f64::consts::PI * self.radius_m * self.radius_m
    }

    /// Lossless wave speed c0 = √(B_eff/ρ) in m/s (Korteweg when B_eff
    /// includes the wall). For a hose, 1/B_eff includes the wall's nominal
    /// compliance ([`ViscoelasticWall::nominal_compliance_per_pa`]).
    pub fn wave_speed_m_s(&self) -> f64 {
        match self.viscoelastic_wall {
            None => (self.effective_bulk_modulus_pa / self.density_kg_m3).sqrt(),
            Some(_) => 1.0 / (self.density_kg_m3 * self.nominal_compliance_per_pa()).sqrt(),
        }
    }

    /// 1/B_eff plus a hose wall's nominal compliance, in 1/Pa.
    pub fn nominal_compliance_per_pa(&self) -> f64 {
        1.0 / self.effective_bulk_modulus_pa
            + self
                .viscoelastic_wall
                .map_or(0.0, |w| w.nominal_compliance_per_pa())
    }

    /// The compliance 1/B*(ω) = 1/B_eff + J_w(ω) in 1/Pa at ω > 0.
    pub fn compliance(&self, omega: f64) -> C64 {
        let liquid = C64::new(1.0 / self.effective_bulk_modulus_pa, 0.0);
        match &self.viscoelastic_wall {
            Some(w) => liquid + w.compliance(omega),
            None => liquid,
        }
    }

    /// The Reynolds number of the mean flow, if the mean flow is known.
    pub fn reynolds_number(&self) -> Option<f64> {
        self.mean_flow
            .flow_m3_s()
            .map(|q| turbulence::reynolds_number(q, self.radius_m, self.kinematic_viscosity_m2_s))
    }

    /// The turbulent excess resistance ΔR' in Pa·s/m⁴ this line's model adds:
    /// non-zero only for [`LineModel::Turbulent`] with a known mean flow
    /// above the transition.
    pub fn turbulent_resistance_per_m(&self) -> f64 {
        match (self.model, self.mean_flow.flow_m3_s()) {
            (LineModel::Turbulent, Some(q)) => turbulence::excess_resistance_per_m(
                q,
                self.radius_m,
                self.density_kg_m3,
                self.kinematic_viscosity_m2_s,
            ),
            _ => 0.0,
        }
    }

    /// Whether the line dissipates nothing (lossless model and a wall
    /// without loss): such a line has no bounded admittance at its half-wave
    /// resonances.
    pub fn is_lossless(&self) -> bool {
        self.model == LineModel::Lossless && self.viscoelastic_wall.is_none_or(|w| w.is_lossless())
    }

    /// Lossless characteristic impedance Z0 = ρc0/A in Pa·s/m³.
    pub fn z0(&self) -> f64 {
        self.density_kg_m3 * self.wave_speed_m_s() / self.area_m2()
    }

    /// Shear-wave number s = r√(ω/ν).
    pub fn shear_number(&self, omega: f64) -> f64 {
        self.radius_m * (omega / self.kinematic_viscosity_m2_s).sqrt()
    }

    /// Hagen–Poiseuille resistance per unit length R' = 8μ/(πr⁴) in Pa·s/m⁴.
    pub fn poiseuille_resistance_per_m(&self) -> f64 {
        let mu = self.density_kg_m3 * self.kinematic_viscosity_m2_s;
        8.0 * mu / (std::f64::consts::PI * self.radius_m.powi(4))
    }

    /// Γ and Zc at angular frequency ω > 0.
    ///
    /// Laminar: Γ = (jω/c0)(1 − F)^{−1/2}, Zc = Z'/Γ (methods.md §2.3). With a
    /// hose wall or a turbulent correction, the general form
    /// Γ = √(Z'Y') (Re Γ ≥ 0), Zc = Z'/Γ, with Z' = jωρ/(A(1 − F)) + ΔR' and
    /// Y' = jωA/B*(ω).
    pub fn propagation(&self, omega: f64) -> Propagation {
        let factor = (self.model != LineModel::Lossless)
            .then(|| viscous::one_minus_viscous_factor(self.shear_number(omega)));
        self.propagation_with(omega, factor)
    }

    /// [`LineProperties::propagation`] with the viscous factor 1 − F already
    /// evaluated at this frequency for this line's bore and fluid (`None`
    /// for the lossless model): lines of one bore in one fluid share it.
    pub fn propagation_with(&self, omega: f64, one_minus_f: Option<C64>) -> Propagation {
        let extra_r = self.turbulent_resistance_per_m();
        if self.viscoelastic_wall.is_some() || extra_r != 0.0 {
            return self.general_propagation(omega, extra_r, one_minus_f);
        }
        let c0 = self.wave_speed_m_s();
        let area = self.area_m2();
        match (self.model, one_minus_f) {
            (LineModel::Laminar | LineModel::Turbulent, Some(g)) => {
                let series = J * (omega * self.density_kg_m3 / area) / g; // Z'
                let mut gamma = J * (omega / c0) / sqrt(g);
                if gamma.re < 0.0 {
                    gamma = -gamma;
                }
                Propagation {
                    gamma,
                    zc: series / gamma,
                }
            }
            _ => Propagation {
                gamma: J * (omega / c0),
                zc: C64::new(self.density_kg_m3 * c0 / area, 0.0),
            },
        }
    }

    /// Γ = √(Z'Y') with Re Γ ≥ 0 (and Im Γ ≥ 0 when Re Γ = 0, the wave
    /// travelling towards +x), Zc = Z'/Γ, for any series resistance added to
    /// the friction model and any wall compliance.
    fn general_propagation(
        &self,
        omega: f64,
        extra_r: f64,
        one_minus_f: Option<C64>,
    ) -> Propagation {
        let area = self.area_m2();
        let inertia = J * (omega * self.density_kg_m3 / area);
        let series = match (self.model, one_minus_f) {
            (LineModel::Laminar | LineModel::Turbulent, Some(g)) => inertia / g + extra_r,
            _ => inertia,
        };
        let shunt = J * (omega * area) * self.compliance(omega);
        let mut gamma = sqrt(series * shunt);
        if gamma.re == 0.0 && gamma.im < 0.0 {
            gamma = -gamma;
        }
        Propagation {
            gamma,
            zc: series / gamma,
        }
    }
}

/// Principal square root (Re ≥ 0) with one hypot and two real square roots:
/// √z = √((|z| + x)/2) + j·sign(y)·√((|z| − x)/2), the larger part computed
/// directly and the other from y/(2·larger) to avoid cancellation.
fn sqrt(z: C64) -> C64 {
    let (x, y) = (z.re, z.im);
    if x == 0.0 && y == 0.0 {
        return C64::new(0.0, 0.0);
    }
    let m = libm::hypot(x, y);
    if x >= 0.0 {
        let re = (0.5 * (m + x)).sqrt();
        C64::new(re, y / (2.0 * re))
    } else {
        let im = (0.5 * (m - x)).sqrt().copysign(y);
        C64::new(y / (2.0 * im), im)
    }
}

/// A uniform line: its properties and its length.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Line {
    /// What the waves depend on.
    pub properties: LineProperties,
    /// Length l in m.
    pub length_m: f64,
}

/// The two-port admittance matrix y (flows leaving the end nodes per end pressures).
pub type Admittance2 = [[C64; 2]; 2];

/// A two-port transfer matrix T: [Pa; Qa] = T·[Pb; Qb], flows in the a→b sense.
pub type Transfer2 = [[C64; 2]; 2];

impl Line {
    /// The admittance two-port at Γ, Zc, in the stable e^{−Γl} form.
    ///
    /// With Γl = x + jy (x ≥ 0), E = e^{−Γl} = a(cos y − j sin y), a = e^{−x},
    /// and m = 1 − a² = −expm1(−2x) ≥ 0, the identities cos 2y = 1 − 2 sin²y
    /// = 2 cos²y − 1 give
    ///
    /// ```text
    /// 1 − E² = m + 2a² sin²y + j 2a² sin y cos y
    /// 1 + E² = m + 2a² cos²y − j 2a² sin y cos y
    /// ```
    ///
    /// whose real parts are sums of non-negative terms: no cancellation for
    /// electrically short lines or near quarter-wave resonances, and only
    /// one exponential, one sine and one cosine per line.
    ///
    /// Returns `None` when 1 − E² is exactly zero (Γl = 0, or a lossless
    /// line exactly at a half-wave resonance), where no admittance form exists.
    pub fn admittance(&self, prop: &Propagation) -> Option<Admittance2> {
        let [terms] = admittance_terms([prop.gamma * self.length_m], [prop.zc]);
        terms.map(admittance_matrix)
    }

    /// The transfer matrix T = [[cosh Γl, Zc sinh Γl], [sinh Γl / Zc, cosh Γl]].
    ///
    /// Overflows for Re(Γl) ≳ 700; use it only for lossless or short lines.
    pub fn transfer(&self, prop: &Propagation) -> Transfer2 {
        let gl = prop.gamma * self.length_m;
        let (c, s) = (gl.cosh(), gl.sinh());
        [[c, prop.zc * s], [s / prop.zc, c]]
    }

    /// Pressure and flow (a→b sense) at distance x from end a, from the end
    /// values, using only decaying exponentials (methods.md §2.6):
    /// F_a = (Pa + Zc Qa)/2, G_b = (Pb − Zc Qb)/2,
    /// P(x) = F_a e^{−Γx} + G_b e^{−Γ(l−x)}, Q(x) = [F_a e^{−Γx} − G_b e^{−Γ(l−x)}]/Zc.
    pub fn state_at(
        &self,
        prop: &Propagation,
        x_m: f64,
        end_a: (C64, C64),
        end_b: (C64, C64),
    ) -> (C64, C64) {
        let (pa, qa) = end_a;
        let (pb, qb) = end_b;
        let fwd = (pa + prop.zc * qa) * 0.5 * (-prop.gamma * x_m).exp();
        let bwd = (pb - prop.zc * qb) * 0.5 * (-prop.gamma * (self.length_m - x_m)).exp();
        (fwd + bwd, (fwd - bwd) / prop.zc)
    }
}

/// The two-port admittance terms (coth Γl/Zc, csch Γl/Zc) of N lossy lines
/// at once from their Γl and Zc, as [`Line::admittance`] forms them (its
/// documentation gives the formulas); `None` for a lane whose 1 − e^{−2Γl}
/// is zero or not finite. Each lane's result depends on its own inputs only
/// (the same bits for N = 1 as beside others); written over arrays so that
/// the lanes' chains of dependent operations (an exponential, a sine and
/// cosine, then products and one division) overlap: the plan evaluates its
/// lines four at a time.
#[inline(always)]
pub fn admittance_terms<const N: usize>(gl: [C64; N], zc: [C64; N]) -> [Option<(C64, C64)>; N] {
    let em = gl.map(|v| libm::expm1(-v.re)); // e^{−x} − 1, exact near x = 0
    let sc = gl.map(|v| libm::sincos(v.im));
    let mut coth = [C64::new(0.0, 0.0); N];
    let mut csch = [C64::new(0.0, 0.0); N];
    let mut bad = [false; N];
    for l in 0..N {
        let a = 1.0 + em[l];
        let m = -em[l] * (1.0 + a); // 1 − a² without cancellation
        let a2 = a * a;
        let (s, c) = sc[l];
        let cross = 2.0 * a2 * s * c;
        let den = C64::new(m + 2.0 * a2 * s * s, cross);
        bad[l] = den == C64::new(0.0, 0.0) || !den.is_finite();
        let num = C64::new(m + 2.0 * a2 * c * c, -cross);
        let e2 = C64::new(2.0 * a * c, -2.0 * a * s);
        // 1/(Zc·den) with one division (|Zc·den|² stays far from overflow:
        // |den| ≤ 3 and Zc of any line is below 1e20 Pa·s/m³)
        let zd = zc[l] * den;
        let r = 1.0 / zd.norm_sqr();
        let scale = C64::new(zd.re * r, -zd.im * r);
        (coth[l], csch[l]) = (num * scale, e2 * scale);
    }
    std::array::from_fn(|l| (!bad[l]).then_some((coth[l], csch[l])))
}

/// A line's two-port admittance (1/Zc)[[coth Γl, −csch Γl], [−csch Γl,
/// coth Γl]] from its terms (coth Γl/Zc, csch Γl/Zc) ([`admittance_terms`]).
pub fn admittance_matrix((coth, csch): (C64, C64)) -> Admittance2 {
    [[coth, -csch], [-csch, coth]]
}

#[cfg(test)]
mod tests {
    use super::*;

    const ONE: C64 = C64 { re: 1.0, im: 0.0 };

    fn oil_line(model: LineModel) -> LineProperties {
        // methods.md §2.3 check case: r = 5 mm, ν = 32e-6, ρ = 870, c0 = 1350.
        LineProperties {
            radius_m: 5e-3,
            density_kg_m3: 870.0,
            kinematic_viscosity_m2_s: 32e-6,
            effective_bulk_modulus_pa: 870.0 * 1350.0 * 1350.0,
            model,
            viscoelastic_wall: None,
            mean_flow: MeanFlow::Unknown,
        }
    }

    // The plan evaluates lines four at a time: each lane must give the bits
    // `Line::admittance` gives alone (the dense reference path and the
    // sparse one then share the element values exactly), including a lane
    // with Γl = 0, which has no admittance form.
    #[test]
    fn lines_evaluated_together_give_the_bits_of_each_alone() {
        let props = oil_line(LineModel::Laminar);
        let lengths = [0.3, 2.0, 17.0, 450.0];
        let freqs = [3.0, 225.0, 1800.0, 9000.0];
        let mut gl = [ONE; 4];
        let mut zc = [ONE; 4];
        for l in 0..4 {
            let prop = props.propagation(2.0 * std::f64::consts::PI * freqs[l]);
            (gl[l], zc[l]) = (prop.gamma * lengths[l], prop.zc);
        }
        gl[3] = C64::new(0.0, 0.0);
        let together = admittance_terms(gl, zc);
        for l in 0..4 {
            let [alone] = admittance_terms([gl[l]], [zc[l]]);
            let bits =
                |t: Option<(C64, C64)>| t.map(|(a, b)| [a.re, a.im, b.re, b.im].map(f64::to_bits));
            assert_eq!(bits(together[l]), bits(alone), "lane {l}");
        }
        assert!(together[3].is_none() && together[0].is_some());
    }

    #[test]
    fn lossless_admittance_matches_the_transfer_matrix() {
        // Y = (1/T12)[[T22, −det T], [−1, T11]] (methods.md §7.1).
        let line = Line {
            properties: oil_line(LineModel::Laminar),
            length_m: 2.0,
        };
        let prop = line
            .properties
            .propagation(2.0 * std::f64::consts::PI * 225.0);
        let y = line.admittance(&prop).unwrap();
        let t = line.transfer(&prop);
        let det = t[0][0] * t[1][1] - t[0][1] * t[1][0];
        let want = [
            [t[1][1] / t[0][1], -det / t[0][1]],
            [-ONE / t[0][1], t[0][0] / t[0][1]],
        ];
        for i in 0..2 {
            for k in 0..2 {
                assert!((y[i][k] - want[i][k]).norm() < 1e-12 * y[0][0].norm());
            }
        }
    }

    #[test]
    fn mean_flow_matters_to_equality_only_for_the_turbulent_model() {
        let a = LineProperties {
            mean_flow: MeanFlow::FromPumps(7e-4),
            ..oil_line(LineModel::Laminar)
        };
        let b = LineProperties {
            mean_flow: MeanFlow::FromPumps(7e-4 * (1.0 + f64::EPSILON)),
            ..a
        };
        assert_eq!(a, b);
        let turbulent = |p: LineProperties| LineProperties {
            model: LineModel::Turbulent,
            ..p
        };
        assert_ne!(turbulent(a), turbulent(b));
        assert_ne!(a, turbulent(a));
    }

    #[test]
    fn square_root_is_the_principal_branch() {
        for z in [
            C64::new(3.0, 4.0),
            C64::new(-3.0, 4.0),
            C64::new(-3.0, -4.0),
            C64::new(2.0, -1e-300),
            C64::new(-1.0, 0.0),
        ] {
            let r = sqrt(z);
            assert!((r * r - z).norm() < 1e-15 * z.norm(), "{z}");
            assert!(r.re >= 0.0);
            assert!(
                (r - z.sqrt()).norm() < 1e-15 * r.norm(),
                "{z}: {r} vs {}",
                z.sqrt()
            );
        }
    }

    #[test]
    fn long_lossy_line_stays_finite() {
        // methods.md §2.6: r = 2 mm, ν = 1e-4, 20 kHz, 2000 m: Re Γl ≈ 1.9e3.
        let props = LineProperties {
            radius_m: 2e-3,
            kinematic_viscosity_m2_s: 1e-4,
            ..oil_line(LineModel::Laminar)
        };
        let line = Line {
            properties: props,
            length_m: 2000.0,
        };
        let prop = props.propagation(2.0 * std::f64::consts::PI * 20e3);
        assert!((prop.gamma * line.length_m).re > 1000.0);
        let y = line.admittance(&prop).unwrap();
        let yzc = [y[0][0] * prop.zc, y[0][1] * prop.zc];
        assert!((yzc[0] - ONE).norm() < 1e-15 && yzc[1].norm() < 1e-15);
    }
}
