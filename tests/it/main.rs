//! Integration tests, one binary (faster to build than one per file). Each module checks
//! the engine against a source outside the project, named beside each check.

mod engine;
mod footprints;
mod io;
mod place;
mod samples;
