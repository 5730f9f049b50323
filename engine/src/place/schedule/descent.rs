//! Descent: zero temperature, accepting only moves that do not raise the energy; the
//! baseline annealing must beat.

use super::{Kind, Step};

pub const KIND: Kind = Kind {
    name: "descent",
    key: "Descent",
    about: "zero temperature, the baseline annealing must beat",
    formula: "T = 0: only moves that do not raise the energy",
    params: &[],
    zero_temperature: true,
    step,
};

fn step(_: &mut Step<'_>) -> f64 {
    0.0
}
