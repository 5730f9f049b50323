//! lehr's engine: places and routes small circuit boards by simulated annealing.
//!
//! The engine knows nothing of any user interface, and its dependency list keeps it so
//! (no window, command-line or error-reporting crates; CI checks `cargo tree`):
//! - [`model`]: geometry, parametric footprints, the board file's types and their checks;
//! - [`io`]: reading and atomically writing board files, with errors located by line and
//!   column;
//! - [`place`]: the incremental placement energy, moves, cooling schedules and the
//!   annealer;
//! - [`route`]: the grid router (A* with rip-up and reroute by negotiated congestion);
//! - [`rules`]: the design-rule checker and the IPC-2221 conductor tables;
//! - [`fab`]: fabrication outputs (Gerber, NC drill, centroid, run log), as text;
//! - [`drawing`]: the board picture (colours, what is drawn, SVG and PNG pens) and the
//!   safety caution shown beside it;
//! - [`worker`]: the worker thread a user interface drives by messages.
//!
//! See docs/ARCHITECTURE.md for the map of modules and the invariants.

pub mod drawing;
pub mod fab;
pub mod io;
pub mod model;
pub mod place;
pub mod route;
pub mod rules;
pub mod worker;
