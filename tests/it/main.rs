//! Integration tests, one binary (faster to build than one per file). Each module checks
//! the engine against a source outside the project, named beside each check.

/// Hand-placed test boards and a synthetic board generator.
mod boards;
/// IPC-2221 conductor sizing and the design-rule checker.
mod rules;
