//! Huang, Romeo and Sangiovanni-Vincentelli (ICCAD 1986): steps in log T proportional to
//! T over the energy's spread.
//!
//! T(k+1) = T(k) exp(-lambda T(k) / sigma(k)), sigma(k) the spread of the energy seen in
//! stage k: small steps where the energy fluctuates most (high specific heat). From the
//! budget, lambda is set each stage so the leg ends on time ([`Step::adaptive`]).

use super::{FROM_THE_BUDGET, Kind, Param, Step};

pub const KIND: Kind = Kind {
    name: "huang",
    key: "Huang",
    about: "adaptive: steps in log T of lambda T / sigma (Huang, Romeo and Sangiovanni-Vincentelli, 1986)",
    formula: "T(k+1) = T(k) exp(-lambda T(k) / sigma(k))",
    params: &[Param {
        name: "lambda",
        label: "step size",
        help: "the log-T step is lambda T / sigma (sigma: the stage's energy spread)",
        min: 0.0,
        max: 1000.0,
        min_open: true,
        max_open: false,
        default: FROM_THE_BUDGET,
        example: 0.7,
    }],
    zero_temperature: false,
    step,
};

fn step(c: &mut Step<'_>) -> f64 {
    let rate = c.t_over_sigma();
    let lambda = c.value(0);
    c.adaptive(rate, lambda)
}

#[cfg(test)]
mod tests {
    use super::super::tests::stats;
    use super::super::{Cooling, Leg, Schedule};

    /// An explicit lambda sets the step: T / sigma = 1/3, lambda 0.6, a log-T step of
    /// 0.2.
    #[test]
    fn an_explicit_lambda_sets_the_step() {
        let leg = Leg {
            t_from: 100.0,
            t_to: 0.01,
            start: 0,
            end: 1_000_000,
        };
        let mut c = Cooling::new(Schedule::Huang.with("lambda", 0.6).unwrap(), leg);
        let next = c.next(&stats(50.0, 100));
        assert!((next - 50.0 * (-0.2f64).exp()).abs() < 1e-9, "{next}");
        assert_eq!(c.parameter(), 0.6);
    }
}
