//! Closing the loop with measurements: measured against predicted ripple at
//! the taps, and calibration of a circuit's uncertain values from them.

pub mod compare;
pub mod fit;
pub mod lm;
pub mod measured;
pub mod write;
