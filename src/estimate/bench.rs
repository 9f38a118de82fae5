//! The validated model of a test bench: what a bench file describes, in SI.
//!
//! A bench is a pump feeding a straight reference line of known bore, with
//! pressure transducers at known distances from the pump outlet (x = 0), run
//! under several test conditions (different downstream systems, or with a
//! secondary source). `io::bench_file` builds it from YAML.

use crate::fluid::Fluid;
use crate::line::{LineModel, LineProperties};
use crate::source::{FlowRipple, SourceImpedance};
use crate::wall::Wall;
use std::path::PathBuf;

/// The pump under test, as far as the bench file states it.
#[derive(Debug, Clone, PartialEq)]
pub struct BenchPump {
    /// Name, for reports and the source file.
    pub name: String,
    /// Nominal shaft speed in rev/s (refined from the records).
    pub speed_rev_s: f64,
    /// Number of pumping elements z (teeth of one gear, or pistons).
    pub pumping_elements: u32,
}

impl BenchPump {
    /// Nominal pumping frequency n·z in Hz.
    pub fn pumping_frequency_hz(&self) -> f64 {
        self.speed_rev_s * f64::from(self.pumping_elements)
    }
}

/// The reference line between the pump outlet and the downstream system.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ReferenceLine {
    /// Bore radius in m.
    pub radius_m: f64,
    /// The wall, for the speed of sound from the fluid (Korteweg).
    pub wall: Wall,
    /// Friction model of the line.
    pub model: LineModel,
}

/// A pressure transducer on the reference line.
#[derive(Debug, Clone, PartialEq)]
pub struct Transducer {
    /// Name (also the default column name in records).
    pub name: String,
    /// Distance from the pump outlet in m.
    pub position_m: f64,
}

/// Where the speed of sound in the reference line comes from.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum SpeedOfSound {
    /// Estimated from the transducers (three or more), ISO 15086-2 principle.
    InSitu,
    /// A stated value in m/s.
    Fixed(f64),
    /// From the fluid's bulk modulus and the wall (Korteweg).
    FromFluid,
}

/// How the source impedance at the pump harmonics is obtained from the
/// secondary-source frequencies.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ImpedanceFit {
    /// Linear interpolation of amplitude and unwrapped phase in frequency.
    Interpolate,
    /// A least-squares fit of Ys = G + jωC (internal volume with leakage,
    /// methods.md §5 form b) over all secondary frequencies.
    CapacitanceLeakage,
}

/// The estimation method.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Method {
    /// Two (or more) downstream systems at the same speed
    /// (two-pressures/two-systems principle, methods.md §6b).
    TwoSystems,
    /// Secondary-source method (methods.md §6a).
    SecondarySource {
        /// How Zs is carried to the pump harmonics.
        impedance_fit: ImpedanceFit,
    },
}

impl Method {
    /// The name used in bench files.
    pub fn name(&self) -> &'static str {
        match self {
            Method::TwoSystems => "two_systems",
            Method::SecondarySource { .. } => "secondary_source",
        }
    }
}

/// What drives the line in a test condition.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ConditionKind {
    /// The pump alone: its harmonics are analysed.
    Pump,
    /// A secondary source at the far end of the line (x = line length)
    /// injects ripple at its own harmonics while the pump runs.
    SecondarySource {
        /// Nominal fundamental frequency of the secondary source in Hz
        /// (refined from the records).
        fundamental_hz: f64,
        /// Flow amplitude of each of its harmonics in m³/s (synthesis only).
        flow_m3_s: Option<f64>,
    },
}

/// The downstream end of the line in a test condition, at x = line length.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Termination {
    /// Load valve resistance to tank in Pa·s/m³.
    pub resistance_pa_s_m3: Option<f64>,
    /// A volume (valve block, hose) at the end in m³.
    pub volume_m3: Option<f64>,
}

/// How a record file is laid out.
#[derive(Debug, Clone, PartialEq)]
pub enum DataFile {
    /// A time series: one row per sample, one column per transducer.
    TimeSeries {
        /// The file (resolved against the bench file's folder).
        path: PathBuf,
        /// SI factor of the values (1 for Pa, 1e5 for bar).
        unit_pa: f64,
        /// Stated sample rate in Hz, if any.
        sample_rate_hz: Option<f64>,
        /// Name of the time column in s, if any.
        time_column: Option<String>,
        /// Name of a tacho column (one pulse per revolution, its rising edge
        /// at the shaft-angle reference), if any.
        tacho_column: Option<String>,
        /// Column name per transducer, in the bench's transducer order.
        columns: Vec<String>,
    },
    /// Complex amplitudes processed elsewhere: `harmonic,frequency_hz,` then
    /// `<column>_re,<column>_im` (and optional `<column>_u`) per transducer.
    Spectra {
        /// The file (resolved against the bench file's folder).
        path: PathBuf,
        /// SI factor of the values.
        unit_pa: f64,
        /// Column stem per transducer.
        columns: Vec<String>,
    },
}

impl DataFile {
    /// The file.
    pub fn path(&self) -> &std::path::Path {
        match self {
            DataFile::TimeSeries { path, .. } | DataFile::Spectra { path, .. } => path,
        }
    }
}

/// One test condition.
#[derive(Debug, Clone, PartialEq)]
pub struct Condition {
    /// Name, for reports.
    pub name: String,
    /// What drives the line.
    pub kind: ConditionKind,
    /// Length of the reference line to the termination in m (synthesis).
    pub line_length_m: Option<f64>,
    /// The termination (synthesis).
    pub termination: Option<Termination>,
    /// The data.
    pub data: DataFile,
}

/// Settings of the harmonic extraction from time series.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Extraction {
    /// Largest relative deviation of the actual speed from the stated one
    /// searched for (e.g. 0.05).
    pub speed_tolerance: f64,
}

impl Default for Extraction {
    fn default() -> Self {
        Extraction {
            speed_tolerance: 0.05,
        }
    }
}

/// A known source and noise settings for `ripline synth`.
#[derive(Debug, Clone, PartialEq)]
pub struct Synthesis {
    /// The source flow ripple at the bench's nominal speed.
    pub flow_ripple: FlowRipple,
    /// The source impedance.
    pub impedance: SourceImpedance,
    /// Noise standard deviation as a fraction of each channel's rms ripple.
    pub noise: f64,
    /// Seed of the noise generator.
    pub seed: u64,
    /// Record duration in s.
    pub duration_s: f64,
    /// Sample rate in Hz for records that state only a time column.
    pub sample_rate_hz: Option<f64>,
    /// Relative deviation of the actual speed from the stated one.
    pub speed_error: f64,
    /// Mean pressure added to every channel in Pa.
    pub mean_pressure_pa: f64,
}

/// A validated bench.
#[derive(Debug, Clone, PartialEq)]
pub struct Bench {
    /// Title for reports.
    pub title: Option<String>,
    /// The fluid.
    pub fluid: Fluid,
    /// The pump.
    pub pump: BenchPump,
    /// Harmonics estimated and reported (1..=N).
    pub harmonics: u32,
    /// The reference line.
    pub line: ReferenceLine,
    /// The transducers, in increasing position.
    pub transducers: Vec<Transducer>,
    /// Where the speed of sound comes from.
    pub speed_of_sound: SpeedOfSound,
    /// The method.
    pub method: Method,
    /// Largest condition number accepted before a harmonic is flagged.
    pub max_condition: f64,
    /// Extraction settings.
    pub extraction: Extraction,
    /// The test conditions.
    pub conditions: Vec<Condition>,
    /// Known source for synthesis, if given.
    pub synthesis: Option<Synthesis>,
}

impl Bench {
    /// Transducer positions in m.
    pub fn positions(&self) -> Vec<f64> {
        self.transducers.iter().map(|t| t.position_m).collect()
    }

    /// Speed of sound from the fluid and the wall, √(B_eff/ρ) (Korteweg).
    pub fn fluid_speed_of_sound_m_s(&self) -> f64 {
        let b = self
            .line
            .wall
            .effective_bulk_modulus(self.fluid.bulk_modulus_pa, 2.0 * self.line.radius_m);
        (b / self.fluid.density_kg_m3).sqrt()
    }

    /// The reference line's properties for a speed of sound c0 in m/s.
    pub fn line_properties(&self, c0_m_s: f64) -> LineProperties {
        LineProperties {
            radius_m: self.line.radius_m,
            density_kg_m3: self.fluid.density_kg_m3,
            kinematic_viscosity_m2_s: self.fluid.kinematic_viscosity_m2_s,
            effective_bulk_modulus_pa: self.fluid.density_kg_m3 * c0_m_s * c0_m_s,
            model: self.line.model,
            viscoelastic_wall: None,
            mean_flow: crate::line::MeanFlow::Unknown,
        }
    }

    /// The speed of sound used before any in-situ estimate: the stated value,
    /// or the fluid's.
    pub fn nominal_speed_of_sound_m_s(&self) -> f64 {
        match self.speed_of_sound {
            SpeedOfSound::Fixed(c) => c,
            _ => self.fluid_speed_of_sound_m_s(),
        }
    }
}
