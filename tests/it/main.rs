//! Integration tests, one binary (faster to build than one per file). Each module checks
//! the engine against a source outside the project, named beside each check.

/// Hand-placed test boards and a synthetic board generator.
mod boards;
/// The command line among other programs: closed pipes, output paths, exit codes.
mod cli;
mod engine;
/// Fabrication exports read back by outside readers (gerber_parser, roxmltree) and the
/// `lehr export` command.
mod fab;
mod footprints;
/// Bad input refused or reported plainly: special files, killed saves, numbers, messages.
mod hardening;
/// Netlist import: RFC 4180 connection lists, EDIF 2 0 0, footprint names.
mod import;
mod io;
/// Boards with known optima, the move budget, replica exchange and threads.
mod optima;
mod place;
/// The router: A* against the `pathfinding` crate, and routed boards against the checker.
mod route;
/// IPC-2221 conductor sizing and the design-rule checker.
mod rules;
mod samples;
/// The engine's module structure: no import loops, no overlong files.
mod structure;
mod sweep;
