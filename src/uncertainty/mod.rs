//! Uncertainty of predictions: values of a circuit with tolerances (and a
//! pump source file's uncertainties) propagated to the ripple, by Monte
//! Carlo (JCGM 101:2008, GUM Supplement 1) and to first order (JCGM
//! 100:2008, the GUM's law of propagation of uncertainty).

pub mod stats;
