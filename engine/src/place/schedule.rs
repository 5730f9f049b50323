//! Cooling schedules: how the temperature falls over a run's move budget.
//!
//! Every schedule plans to use the whole budget. A run cools along a [`Leg`]: from a
//! start temperature at one move count to an end temperature at a later one (the first
//! leg spans the whole budget; a reheat or a change of schedule starts a new one over the
//! moves left or added). The schedule is the *shape* of the fall along the leg; its rate
//! follows from the leg's length, so two schedules given the same budget cost the same.
//! The formulas, per stage k of S stages on a leg from T0 to Te:
//!
//! - geometric: T(k+1) = alpha T(k), alpha = (Te / T0)^(1/S) (even steps in log T);
//! - Lundy-Mees (Lundy and Mees, Math. Programming 34, 1986):
//!   T(k+1) = T(k) / (1 + beta T(k)), beta = (1/Te - 1/T0) / S (even steps in 1/T);
//! - Huang (Huang, Romeo and Sangiovanni-Vincentelli, ICCAD 1986):
//!   T(k+1) = T(k) exp(-lambda T(k) / sigma(k)), sigma(k) the spread of the energy
//!   seen in stage k: small steps where the energy fluctuates most (high specific heat);
//! - Lam-Delosme (Lam and Delosme, DAC 1988): with s = 1/T,
//!   s(k+1) = s(k) + lambda (1 / sigma) (1 / (s^2 sigma^2)) G(rho),
//!   G(rho) = 4 rho (1 - rho)^2 / (2 - rho)^2 (rho the stage's acceptance ratio; G peaks
//!   at rho = 0.44): even smaller steps at high specific heat, largest where the
//!   acceptance is near 0.44;
//! - descent: T = 0 (accept no uphill move), the baseline annealing must beat.
//!
//! The adaptive two have no fixed lambda: each stage sets it so that, were the rest of
//! the leg to behave like the stages seen so far (the geometric mean of their step
//! factors), the leg would end at Te on its last move. Their steps stay within a quarter
//! and four times the even log-T step, and the last stage of a leg ends at Te.

use serde::{Deserialize, Serialize};
use std::fmt;
use std::str::FromStr;

/// A cooling schedule: the shape of the temperature's fall over a leg. See the module
/// docs for each formula.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
pub enum Schedule {
    /// Even steps in log T: T(k+1) = alpha T(k).
    #[default]
    Geometric,
    /// Even steps in 1/T: T(k+1) = T(k) / (1 + beta T(k)) (Lundy and Mees, 1986).
    LundyMees,
    /// Steps in 1/T by the energy's spread and the acceptance ratio (Lam and Delosme,
    /// 1988): slowest where the specific heat peaks.
    LamDelosme,
    /// Steps in log T proportional to T over the energy's spread (Huang, Romeo and
    /// Sangiovanni-Vincentelli, 1986).
    Huang,
    /// Zero temperature: accept only moves that do not raise the energy.
    Descent,
}

/// One leg of cooling: from `t_from` at move `start` to `t_to` at move `end`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Leg {
    pub t_from: f64,
    pub t_to: f64,
    pub start: u64,
    pub end: u64,
}

/// What a schedule needs to know about the stage that just ended.
#[derive(Clone, Copy, Debug, Default)]
pub struct StageStats {
    pub temperature: f64,
    /// Fraction of the stage's moves that were accepted.
    pub acceptance: f64,
    /// Standard deviation of the energy over the stage.
    pub energy_sigma: f64,
    /// Moves made so far, at the end of the stage.
    pub moves: u64,
    /// Moves per stage.
    pub stage_moves: u64,
}

/// Lam and Delosme's quality factor of a stage with acceptance ratio `rho`:
/// G(rho) = 4 rho (1 - rho)^2 / (2 - rho)^2 (from memory, see CHECK-VALUES.md; it
/// peaks near rho = 0.44).
pub fn lam_quality(rho: f64) -> f64 {
    let r = rho.clamp(0.0, 1.0);
    4.0 * r * (1.0 - r).powi(2) / (2.0 - r).powi(2)
}

/// A schedule cooling along a leg, with what the adaptive schedules learn as they go.
#[derive(Clone, Debug)]
pub struct Cooling {
    pub schedule: Schedule,
    pub leg: Leg,
    /// Sum and count of the log step factors of the stages seen on this leg (the
    /// adaptive schedules' lambda is set from their mean).
    log_rate_sum: f64,
    rates: u32,
    /// The last stage's step factor (lambda) and its log-T step, for display.
    last_lambda: f64,
    last_step: f64,
}

impl Cooling {
    pub fn new(schedule: Schedule, leg: Leg) -> Cooling {
        Cooling {
            schedule,
            leg,
            log_rate_sum: 0.0,
            rates: 0,
            last_lambda: 0.0,
            last_step: 0.0,
        }
    }

    /// Starts a new leg (a reheat, a change of schedule); the adaptive schedules start
    /// learning afresh.
    pub fn set_leg(&mut self, leg: Leg) {
        *self = Cooling::new(self.schedule, leg);
    }

    /// The temperature at the start of the run or leg.
    pub fn start_temperature(&self) -> f64 {
        if self.schedule == Schedule::Descent {
            0.0
        } else {
            self.leg.t_from
        }
    }

    /// The parameter of the schedule's formula as the last step set it: alpha for
    /// geometric, beta (per unit of 1/T) for Lundy-Mees, lambda for the adaptive two.
    pub fn parameter(&self) -> f64 {
        self.last_lambda
    }

    /// The temperature for the stage after the one `s` describes.
    pub fn next(&mut self, s: &StageStats) -> f64 {
        let leg = self.leg;
        if self.schedule == Schedule::Descent {
            return 0.0;
        }
        let t = s.temperature;
        if s.moves >= leg.end || t.is_nan() || t <= 0.0 || leg.t_to >= t {
            return leg.t_to.min(t.max(leg.t_to));
        }
        let stage = s.stage_moves.max(1) as f64;
        // Stages left on the leg, this one's successor included.
        let left = ((leg.end - s.moves) as f64 / stage).max(1.0);
        if left <= 1.0 {
            return leg.t_to;
        }
        let span = (leg.end.saturating_sub(leg.start)).max(1) as f64;
        let p = ((s.moves.saturating_sub(leg.start)) as f64 / span).clamp(0.0, 1.0);
        match self.schedule {
            Schedule::Geometric => {
                let next = leg.t_from * (leg.t_to / leg.t_from).powf(p);
                self.last_lambda = next / t;
                next
            }
            Schedule::LundyMees => {
                let inv = 1.0 / leg.t_from + (1.0 / leg.t_to - 1.0 / leg.t_from) * p;
                let next = 1.0 / inv;
                self.last_lambda = (1.0 / next - 1.0 / t) * leg.t_from;
                next
            }
            Schedule::Huang | Schedule::LamDelosme => {
                // The log-T step the formula asks for, up to lambda: Huang's
                // lambda T / sigma; Lam-Delosme's ds = lambda G / (s^2 sigma^3) is a
                // log-T step of s ds = lambda G T^3 / sigma^3 (for small steps).
                let sigma = s.energy_sigma;
                let even = (t / leg.t_to).ln() / left;
                let rate = if sigma > 0.0 && sigma.is_finite() {
                    let x = t / sigma;
                    match self.schedule {
                        Schedule::Huang => x,
                        _ => lam_quality(s.acceptance).max(1e-6) * x * x * x,
                    }
                } else {
                    f64::NAN
                };
                let step = if rate.is_finite() && rate > 0.0 {
                    self.log_rate_sum += rate.ln();
                    self.rates += 1;
                    let mean = (self.log_rate_sum / f64::from(self.rates)).exp();
                    // lambda such that the mean rate would end the leg on time.
                    let lambda = even / mean;
                    self.last_lambda = lambda;
                    (lambda * rate).clamp(even / 4.0, even * 4.0)
                } else {
                    // No spread seen (nothing accepted): the even step.
                    even
                };
                self.last_step = step;
                (t * (-step).exp()).max(leg.t_to)
            }
            Schedule::Descent => 0.0,
        }
    }
}

impl Schedule {
    /// All schedules, in the order the CLI and the window list them.
    pub const ALL: [Schedule; 5] = [
        Schedule::Geometric,
        Schedule::LundyMees,
        Schedule::LamDelosme,
        Schedule::Huang,
        Schedule::Descent,
    ];

    /// All schedule names, as the CLI and the window list them.
    pub const NAMES: [&'static str; 5] =
        ["geometric", "lundy-mees", "lam-delosme", "huang", "descent"];

    pub fn name(&self) -> &'static str {
        match self {
            Schedule::Geometric => "geometric",
            Schedule::LundyMees => "lundy-mees",
            Schedule::LamDelosme => "lam-delosme",
            Schedule::Huang => "huang",
            Schedule::Descent => "descent",
        }
    }

    /// The schedule's formula, as the window shows it.
    pub fn formula(&self) -> &'static str {
        match self {
            Schedule::Geometric => "T(k+1) = alpha T(k), alpha = (Te/T0)^(1/stages)",
            Schedule::LundyMees => "T(k+1) = T(k) / (1 + beta T(k)), beta = (1/Te - 1/T0) / stages",
            Schedule::LamDelosme => {
                "s = 1/T: s(k+1) = s(k) + lambda G(rho) / (s^2 sigma^3), \
                 G(rho) = 4 rho (1 - rho)^2 / (2 - rho)^2"
            }
            Schedule::Huang => "T(k+1) = T(k) exp(-lambda T(k) / sigma(k))",
            Schedule::Descent => "T = 0: only moves that do not raise the energy",
        }
    }

    /// True for the zero-temperature baseline.
    pub fn is_descent(&self) -> bool {
        matches!(self, Schedule::Descent)
    }
}

impl fmt::Display for Schedule {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

impl FromStr for Schedule {
    type Err = String;

    fn from_str(s: &str) -> Result<Schedule, String> {
        let l = s.to_ascii_lowercase();
        Schedule::ALL
            .into_iter()
            .find(|k| k.name() == l)
            .ok_or_else(|| {
                format!(
                    "unknown schedule \"{s}\" (known: {})",
                    Schedule::NAMES.join(", ")
                )
            })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_round_trip() {
        for n in Schedule::NAMES {
            assert_eq!(n.parse::<Schedule>().unwrap().name(), n);
        }
    }

    fn stats(t: f64, moves: u64) -> StageStats {
        StageStats {
            temperature: t,
            acceptance: 0.4,
            energy_sigma: 3.0 * t,
            moves,
            stage_moves: 100,
        }
    }

    /// Every schedule cools along a leg and reaches its end temperature on the leg's
    /// last stage, whatever the energy statistics.
    #[test]
    fn every_schedule_ends_its_leg_at_the_end_temperature() {
        for sch in Schedule::ALL {
            let leg = Leg {
                t_from: 100.0,
                t_to: 0.1,
                start: 0,
                end: 10_000,
            };
            let mut c = Cooling::new(sch, leg);
            let mut t = c.start_temperature();
            let mut moves = 0;
            while moves < 10_000 {
                moves += 100;
                let next = c.next(&stats(t, moves));
                assert!(next <= t, "{sch}: {next} after {t}");
                t = next;
            }
            let want = if sch.is_descent() { 0.0 } else { 0.1 };
            assert!((t - want).abs() < 1e-9, "{sch}: ended at {t}");
        }
    }

    /// Geometric and Lundy-Mees follow their closed forms: half-way along a leg from 100
    /// to 1, geometric is at 10 (even in log T) and Lundy-Mees at 1/0.505 (even in 1/T).
    #[test]
    fn planned_schedules_follow_their_closed_forms() {
        let leg = Leg {
            t_from: 100.0,
            t_to: 1.0,
            start: 0,
            end: 1000,
        };
        let mut g = Cooling::new(Schedule::Geometric, leg);
        assert!((g.next(&stats(50.0, 500)) - 10.0).abs() < 1e-9);
        let mut l = Cooling::new(Schedule::LundyMees, leg);
        assert!((l.next(&stats(50.0, 500)) - 1.0 / 0.505).abs() < 1e-9);
    }

    /// Lam and Delosme's quality factor peaks near an acceptance of 0.44 (computed
    /// maximum 0.438, CHECK-VALUES.md).
    #[test]
    fn lam_quality_peaks_near_0_44() {
        let best = (1..1000)
            .map(|i| f64::from(i) / 1000.0)
            .max_by(|a, b| lam_quality(*a).total_cmp(&lam_quality(*b)))
            .unwrap();
        assert!((best - 0.438).abs() < 0.002, "{best}");
    }

    /// The adaptive schedules slow down where the energy fluctuates most: a stage with a
    /// larger spread (higher specific heat) takes a smaller step than one with a smaller
    /// spread, once both have been seen.
    #[test]
    fn adaptive_schedules_slow_down_at_high_specific_heat() {
        for sch in [Schedule::Huang, Schedule::LamDelosme] {
            let leg = Leg {
                t_from: 100.0,
                t_to: 0.01,
                start: 0,
                end: 1_000_000,
            };
            let mut c = Cooling::new(sch, leg);
            let calm = StageStats {
                energy_sigma: 1.0,
                ..stats(50.0, 100)
            };
            let busy = StageStats {
                energy_sigma: 4.0,
                ..stats(50.0, 200)
            };
            let a = c.next(&calm);
            let b = c.next(&busy);
            assert!(
                b > a,
                "{sch}: busy step to {b} should be smaller than calm to {a}"
            );
        }
    }
}
