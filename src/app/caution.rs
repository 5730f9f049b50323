//! Safety cautions: a board whose net classes declare hazardous voltages, or currents that
//! need wide tracks, gets a visible caution in the window. The text is the engine's
//! ([`lehr_engine::drawing::caution`]), the same `lehr export` prints.

pub use lehr_engine::drawing::caution::caution;
