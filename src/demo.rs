//! The built-in demo circuit (an invented scenario; see the file's header).

/// The demo circuit file, also shipped as `networks/crane_pressure_line.yaml`.
pub const DEMO_CIRCUIT: &str = include_str!("../networks/crane_pressure_line.yaml");

/// The name under which the demo is reported.
pub const DEMO_NAME: &str = "networks/crane_pressure_line.yaml (built-in demo)";
