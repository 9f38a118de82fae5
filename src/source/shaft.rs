//! Pumps on shafts: which pumps run at one speed with one angle reference.
//!
//! Pumps on one shaft (a tandem pump, or sections on one drive) share the
//! shaft speed and the shaft-angle reference of their harmonic phases, so
//! where their harmonics fall on the same frequency their flows add as
//! phasors and are solved together. Pumps on different shafts are unrelated
//! in phase: each shaft is solved on its own, with every pump's source
//! impedance in the network, and the results superpose in power
//! (methods.md §5: different pumps/speeds are solved separately and
//! superposed).
//!
//! A shaft's ripple repeats with the *shaft fundamental* n·g, g being the
//! greatest common divisor of its pumps' numbers of pumping elements; for a
//! single pump, or pumps with equal z, that is the pumping frequency n·z.

use super::Pump;
use crate::elements::NodeId;
use num_complex::Complex64 as C64;

/// The pumps on one shaft.
#[derive(Debug, Clone, PartialEq)]
pub struct Shaft {
    /// The shaft's name (`shaft` key), or the pump's name for a pump on a
    /// shaft of its own.
    pub name: String,
    /// Indices of its pumps in `Circuit::pumps`, in file order.
    pub pumps: Vec<usize>,
    /// g: the greatest common divisor of the pumps' numbers of pumping
    /// elements; the shaft fundamental is n·g.
    pub fundamental_elements: u32,
}

/// Groups pumps by shaft, in order of first appearance: pumps naming the
/// same `shaft` share one; a pump with no shaft name has one of its own.
pub fn shafts(pumps: &[Pump]) -> Vec<Shaft> {
    let mut out: Vec<(Option<&str>, Shaft)> = Vec::new();
    for (i, p) in pumps.iter().enumerate() {
        let key = p.shaft.as_deref();
        match out.iter_mut().find(|(k, _)| key.is_some() && *k == key) {
            Some((_, s)) => {
                s.pumps.push(i);
                s.fundamental_elements = gcd(s.fundamental_elements, p.pumping_elements);
            }
            None => out.push((
                key,
                Shaft {
                    name: key.unwrap_or(&p.name).to_string(),
                    pumps: vec![i],
                    fundamental_elements: p.pumping_elements,
                },
            )),
        }
    }
    out.into_iter().map(|(_, s)| s).collect()
}

fn gcd(a: u32, b: u32) -> u32 {
    if b == 0 { a } else { gcd(b, a % b) }
}

impl Shaft {
    /// A shaft holding only pump `index` (its contribution alone).
    pub fn single(pumps: &[Pump], index: usize) -> Self {
        Shaft {
            name: pumps[index].name.clone(),
            pumps: vec![index],
            fundamental_elements: pumps[index].pumping_elements,
        }
    }

    /// The shaft speed in rev/s (that of its first pump; the circuit file
    /// checks that the others agree).
    pub fn speed_rev_s(&self, pumps: &[Pump]) -> f64 {
        pumps[self.pumps[0]].speed_rev_s
    }

    /// The operating speed range of the shaft: the first one its pumps
    /// state.
    pub fn speed_range_rev_s(&self, pumps: &[Pump]) -> Option<(f64, f64)> {
        self.pumps.iter().find_map(|&i| pumps[i].speed_range_rev_s)
    }

    /// Sets the speed of every pump on the shaft.
    pub fn set_speed(&self, pumps: &mut [Pump], speed_rev_s: f64) {
        for &i in &self.pumps {
            pumps[i].speed_rev_s = speed_rev_s;
        }
    }

    /// The shaft fundamental n·g in Hz at `speed_rev_s`.
    pub fn fundamental_hz(&self, speed_rev_s: f64) -> f64 {
        speed_rev_s * f64::from(self.fundamental_elements)
    }

    /// The orders j of the shaft fundamental at which at least one pump
    /// has one of its harmonics 1..=`harmonics` with source flow
    /// ([`Pump::has_source_flow`]), increasing. For one pump, or pumps with
    /// equal z, these are 1..=`harmonics` less those without source flow
    /// (a flow table shorter than `harmonics`): they excite nothing, so
    /// every analysis and report leaves them out ([`Shaft::silent_orders`]).
    pub fn orders(&self, pumps: &[Pump], harmonics: u32) -> Vec<u32> {
        self.all_orders(pumps, harmonics, true)
    }

    /// The orders 1..=`harmonics` (of each pump, as for [`Shaft::orders`])
    /// at which no pump on the shaft has source flow, increasing.
    pub fn silent_orders(&self, pumps: &[Pump], harmonics: u32) -> Vec<u32> {
        let with = self.orders(pumps, harmonics);
        let mut all = self.all_orders(pumps, harmonics, false);
        all.retain(|o| !with.contains(o));
        all
    }

    fn all_orders(&self, pumps: &[Pump], harmonics: u32, with_flow: bool) -> Vec<u32> {
        let g = self.fundamental_elements;
        let mut orders: Vec<u32> = self
            .pumps
            .iter()
            .flat_map(|&i| {
                let p = &pumps[i];
                let per = p.pumping_elements / g;
                (1..=harmonics)
                    .filter(move |&k| !with_flow || p.has_source_flow(k))
                    .map(move |k| k * per)
            })
            .collect();
        orders.sort_unstable();
        orders.dedup();
        orders
    }

    /// Replaces `out` with the source flows (node, peak phasor in m³/s) the
    /// shaft's pumps inject at order `order` of the shaft fundamental, at
    /// shaft speed `speed_rev_s`, against the shaft angle, counting each
    /// pump's harmonics 1..=`harmonics` only. Pumps feeding the same node
    /// are summed.
    pub fn injections(
        &self,
        pumps: &[Pump],
        order: u32,
        harmonics: u32,
        speed_rev_s: f64,
        out: &mut Vec<(NodeId, C64)>,
    ) {
        out.clear();
        let shaft_order = order * self.fundamental_elements;
        for &i in &self.pumps {
            let p = &pumps[i];
            let k = shaft_order / p.pumping_elements;
            if !shaft_order.is_multiple_of(p.pumping_elements) || k > harmonics {
                continue;
            }
            let q = p.flow_ripple_at(k, speed_rev_s);
            match out.iter_mut().find(|(n, _)| *n == p.node) {
                Some((_, sum)) => *sum += q,
                None => out.push((p.node, q)),
            }
        }
    }
}
