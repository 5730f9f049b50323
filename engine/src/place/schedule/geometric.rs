//! Geometric cooling: even steps in log T.
//!
//! T(k+1) = alpha T(k). From the budget, alpha = (Te / T0)^(1/S) over the S stages of a
//! leg from T0 to Te (the temperature is set from the closed form at each stage's end).

use super::{FROM_THE_BUDGET, Kind, Param, Step};

pub const KIND: Kind = Kind {
    name: "geometric",
    key: "Geometric",
    about: "even steps in log T",
    formula: "T(k+1) = alpha T(k), alpha = (Te/T0)^(1/stages)",
    params: &[Param {
        name: "alpha",
        label: "cooling factor",
        help: "T(k+1) = alpha T(k), per stage",
        min: 0.0,
        max: 1.0,
        min_open: true,
        max_open: true,
        default: FROM_THE_BUDGET,
        example: 0.95,
    }],
    zero_temperature: false,
    step,
};

fn step(c: &mut Step<'_>) -> f64 {
    let (leg, t) = (c.leg, c.t);
    let next = match c.value(0) {
        None => leg.t_from * (leg.t_to / leg.t_from).powf(c.progress),
        Some(alpha) => (alpha * t).max(leg.t_to),
    };
    c.report(next / t);
    next
}

#[cfg(test)]
mod tests {
    use super::super::tests::{LEG, stats};
    use super::super::{Cooling, Schedule};

    /// Half-way along a leg from 100 to 1, geometric is at 10 (even in log T).
    #[test]
    fn follows_its_closed_form() {
        let mut g = Cooling::new(Schedule::Geometric, LEG);
        assert!((g.next(&stats(50.0, 500)) - 10.0).abs() < 1e-9);
    }

    /// An explicit alpha is the step factor, down to the leg's end temperature.
    #[test]
    fn an_explicit_alpha_is_the_step_factor() {
        let mut g = Cooling::new(Schedule::Geometric.with("alpha", 0.5).unwrap(), LEG);
        assert_eq!(g.next(&stats(50.0, 500)), 25.0);
        assert_eq!(g.parameter(), 0.5);
        assert_eq!(g.next(&stats(1.5, 600)), 1.0);
    }
}
