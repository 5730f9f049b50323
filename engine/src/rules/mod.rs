//! Design rules: conductor sizing from IPC-2221 ([`width`]), exact copper geometry
//! ([`geometry`]) and the design-rule checker ([`drc`]).
//!
//! **Invariant:** nothing here does I/O, spawns threads or knows about the router; the
//! router uses [`geometry`], never the other way round.

pub mod drc;
pub mod geometry;
pub mod width;

pub use drc::{Violation, ViolationKind, check};
pub use width::{
    LayerPosition, SpacingClass, clearance_for_voltage_mm, current_capacity_a, required_width_mm,
};
