//! Lundy and Mees (Math. Programming 34, 1986): even steps in 1/T.
//!
//! T(k+1) = T(k) / (1 + beta T(k)). From the budget, beta = (1/Te - 1/T0) / S over the S
//! stages of a leg from T0 to Te. beta is given and reported per unit of 1/T0 (beta T0),
//! so its values do not depend on the energy's scale.

use super::{FROM_THE_BUDGET, Kind, Param, Step};

pub const KIND: Kind = Kind {
    name: "lundy-mees",
    key: "LundyMees",
    about: "even steps in 1/T (Lundy and Mees, 1986)",
    formula: "T(k+1) = T(k) / (1 + beta T(k)), beta = (1/Te - 1/T0) / stages",
    params: &[Param {
        name: "beta",
        label: "step in 1/T",
        help: "per stage, in units of 1/T0",
        min: 0.0,
        max: 1e6,
        min_open: true,
        max_open: false,
        default: FROM_THE_BUDGET,
        example: 0.05,
    }],
    zero_temperature: false,
    step,
};

fn step(c: &mut Step<'_>) -> f64 {
    let (leg, t) = (c.leg, c.t);
    match c.value(0) {
        None => {
            let inv = 1.0 / leg.t_from + (1.0 / leg.t_to - 1.0 / leg.t_from) * c.progress;
            let next = 1.0 / inv;
            c.report((1.0 / next - 1.0 / t) * leg.t_from);
            next
        }
        Some(beta) => {
            c.report(beta);
            (1.0 / (1.0 / t + beta / leg.t_from)).max(leg.t_to)
        }
    }
}

#[cfg(test)]
mod tests {
    use super::super::tests::{LEG, stats};
    use super::super::{Cooling, Schedule};

    /// Half-way along a leg from 100 to 1, Lundy-Mees is at 1/0.505 (even in 1/T).
    #[test]
    fn follows_its_closed_form() {
        let mut l = Cooling::new(Schedule::LundyMees, LEG);
        assert!((l.next(&stats(50.0, 500)) - 1.0 / 0.505).abs() < 1e-9);
    }

    /// beta 1 (per unit of 1/T0 = 1/100) from T 50: 1/T goes from 0.02 to 0.03.
    #[test]
    fn an_explicit_beta_is_the_step_in_one_over_t() {
        let mut l = Cooling::new(Schedule::LundyMees.with("beta", 1.0).unwrap(), LEG);
        assert!((l.next(&stats(50.0, 500)) - 1.0 / 0.03).abs() < 1e-9);
        assert_eq!(l.parameter(), 1.0);
    }
}
