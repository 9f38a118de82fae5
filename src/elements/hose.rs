//! A hose between two nodes: a distributed line with a viscoelastic wall.

use super::Behaviour;
use super::tube::line_behaviour;
use crate::hose::{HoseConstruction, HoseError, PressureData};
use crate::line::{Line, Propagation};

/// A hose: a distributed line between its "from" node (x = 0) and its "to"
/// node (x = l) whose wall compliance is complex and frequency dependent
/// (`line.properties.viscoelastic_wall`, see [`crate::hose`]). It shares the
/// line model, the network stamp and the taps with [`super::Tube`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Hose {
    /// The line (properties, with `viscoelastic_wall` set, and length).
    pub line: Line,
    /// The typical construction its wall came from, if any (for reports).
    pub construction: Option<HoseConstruction>,
    /// Wall data against mean pressure, and the pressure the wall was
    /// evaluated at, when the wall follows the pressure.
    pub pressure: Option<HosePressure>,
}

/// A hose wall that follows the mean pressure ([`PressureData`]), evaluated
/// at the circuit's mean pressure.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HosePressure {
    /// The wall data at several mean pressures.
    pub data: PressureData,
    /// The mean pressure (gauge) the wall is evaluated at, in Pa.
    pub mean_pressure_pa: f64,
}

impl Hose {
    /// Bore diameter in m.
    pub fn bore_m(&self) -> f64 {
        2.0 * self.line.properties.radius_m
    }

    /// Whether the network gives it branch-flow unknowns (a lossless model
    /// with a lossless wall).
    pub fn needs_branch_flows(&self) -> bool {
        self.line.properties.is_lossless()
    }

    /// The hose with its wall evaluated at another mean pressure (gauge,
    /// Pa) in a fluid of density ρ and bulk modulus B at that pressure;
    /// unchanged when its wall does not follow the pressure.
    ///
    /// # Errors
    /// [`HoseError::FasterThanFluid`] when the hose would be stiffer than
    /// the fluid there.
    pub fn at_mean_pressure(
        &self,
        pressure_pa: f64,
        density_kg_m3: f64,
        fluid_bulk_modulus_pa: f64,
    ) -> Result<Hose, HoseError> {
        let Some(p) = self.pressure else {
            return Ok(*self);
        };
        let mut h = *self;
        let wall = p
            .data
            .wall_at(pressure_pa, density_kg_m3, fluid_bulk_modulus_pa)?;
        h.line.properties.viscoelastic_wall = Some(wall);
        h.line.properties.density_kg_m3 = density_kg_m3;
        h.line.properties.effective_bulk_modulus_pa = fluid_bulk_modulus_pa;
        h.pressure = Some(HosePressure {
            mean_pressure_pa: pressure_pa,
            ..p
        });
        Ok(h)
    }

    /// The hose's two-port given its line's Γ and Zc at the frequency.
    pub fn behaviour(&self, prop: &Propagation) -> Behaviour {
        line_behaviour(&self.line, prop)
    }
}
