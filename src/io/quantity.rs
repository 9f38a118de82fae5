//! Serde support for quantities with units in input files.
//!
//! `Q<D>` deserialises from a YAML number (SI) or a string with a unit and
//! holds the SI value. Because the conversion happens inside the
//! deserialiser, a bad unit is reported by the YAML parser with its line and
//! column.

use crate::units::{Dimension, parse_quantity};
use serde::de::{self, Deserializer, Visitor};
use std::fmt;
use std::marker::PhantomData;

/// A dimension marker for [`Q`].
pub trait Dim {
    /// The dimension.
    const DIM: Dimension;
}

macro_rules! dims {
    ($($name:ident => $dim:ident),* $(,)?) => {
        $(
            #[doc = concat!("Marker for [`Dimension::", stringify!($dim), "`].")]
            #[derive(Debug, Clone, Copy, PartialEq)]
            pub struct $name;
            impl Dim for $name {
                const DIM: Dimension = Dimension::$dim;
            }
        )*
    };
}

dims! {
    Length => Length,
    Pressure => Pressure,
    Modulus => Modulus,
    Volume => Volume,
    ShaftSpeed => ShaftSpeed,
    KinematicViscosity => KinematicViscosity,
    Density => Density,
    Frequency => Frequency,
    Flow => Flow,
    Angle => Angle,
    Resistance => Resistance,
    Inertance => Inertance,
    Ratio => Ratio,
    Temperature => Temperature,
    Velocity => Velocity,
    Time => Time,
    Mass => Mass,
    Area => Area,
    Stiffness => Stiffness,
    Damping => Damping,
    FlowGain => FlowGain,
    FlowPressureCoefficient => FlowPressureCoefficient,
}

/// A quantity of dimension `D`, stored in SI.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Q<D: Dim> {
    /// The SI value.
    pub si: f64,
    _dim: PhantomData<D>,
}

impl<D: Dim> Q<D> {
    /// Wraps an SI value.
    pub fn new(si: f64) -> Self {
        Q {
            si,
            _dim: PhantomData,
        }
    }
}

impl<'de, D: Dim> serde::Deserialize<'de> for Q<D> {
    fn deserialize<De: Deserializer<'de>>(deserializer: De) -> Result<Self, De::Error> {
        struct QVisitor<D>(PhantomData<D>);

        impl<D: Dim> QVisitor<D> {
            fn finite<E: de::Error>(v: f64) -> Result<Q<D>, E> {
                if v.is_finite() {
                    Ok(Q::new(v))
                } else {
                    Err(E::custom(format!(
                        "{} must be a finite number, found {v}",
                        D::DIM.name()
                    )))
                }
            }
        }

        impl<D: Dim> Visitor<'_> for QVisitor<D> {
            type Value = Q<D>;

            fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
                write!(
                    f,
                    "a {} as a number in {} or a string with a unit such as \"{}\"",
                    D::DIM.name(),
                    D::DIM.si_unit(),
                    example(D::DIM)
                )
            }

            fn visit_f64<E: de::Error>(self, v: f64) -> Result<Q<D>, E> {
                Self::finite(v)
            }

            fn visit_i64<E: de::Error>(self, v: i64) -> Result<Q<D>, E> {
                Self::finite(v as f64)
            }

            fn visit_u64<E: de::Error>(self, v: u64) -> Result<Q<D>, E> {
                Self::finite(v as f64)
            }

            fn visit_str<E: de::Error>(self, v: &str) -> Result<Q<D>, E> {
                parse_quantity(v, D::DIM)
                    .map(Q::new)
                    .map_err(|e| E::custom(e.to_string()))
            }
        }

        deserializer.deserialize_any(QVisitor(PhantomData))
    }
}

fn example(dim: Dimension) -> String {
    let unit = dim.units().get(1).map_or("", |(u, _)| *u);
    format!("2.5 {unit}")
}
