//! Cooling schedules: how the temperature changes from one stage (a batch of moves at a
//! fixed temperature) to the next.

use serde::{Deserialize, Serialize};
use std::fmt;
use std::str::FromStr;

/// A cooling schedule and its parameters. Each formula is in the variant's doc comment.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub enum Schedule {
    /// T(k+1) = alpha * T(k).
    Geometric { alpha: f64 },
    /// Lundy and Mees (1986): T(k+1) = T(k) / (1 + beta * T(k)). Here `beta` is given per
    /// unit of the start temperature (the formula is applied to T/T0), so one value suits
    /// boards whose energies differ by orders of magnitude.
    LundyMees { beta: f64 },
    /// Adaptive schedule after Lam and Delosme (1988): the temperature is steered so that
    /// the acceptance ratio follows a target trajectory over the move budget: from near 1
    /// down to `target` (0.44, where their quality factor peaks) over the first 15 %, held
    /// there until 65 %, then down toward zero. Needs a move budget.
    LamDelosme { target: f64 },
    /// Huang, Romeo and Sangiovanni-Vincentelli (1986):
    /// T(k+1) = T(k) * exp(-lambda * T(k) / sigma(k)), sigma(k) being the standard deviation
    /// of the energy seen during stage k. The factor is kept within [0.5, 0.99].
    Huang { lambda: f64 },
    /// Zero-temperature descent: accept only moves that do not raise the energy. The
    /// baseline annealing must beat.
    Descent,
}

impl Default for Schedule {
    fn default() -> Self {
        Schedule::Geometric { alpha: 0.95 }
    }
}

/// What a schedule needs to know about the stage that just ended.
#[derive(Clone, Copy, Debug, Default)]
pub struct StageStats {
    pub temperature: f64,
    /// Fraction of the stage's moves that were accepted.
    pub acceptance: f64,
    /// Standard deviation of the energy over the stage.
    pub energy_sigma: f64,
    /// Fraction of the move budget used so far (0 when there is no budget).
    pub progress: f64,
}

impl Schedule {
    /// All schedule names, as the CLI and the GUI list them.
    pub const NAMES: [&'static str; 5] =
        ["geometric", "lundy-mees", "lam-delosme", "huang", "descent"];

    pub fn name(&self) -> &'static str {
        match self {
            Schedule::Geometric { .. } => "geometric",
            Schedule::LundyMees { .. } => "lundy-mees",
            Schedule::LamDelosme { .. } => "lam-delosme",
            Schedule::Huang { .. } => "huang",
            Schedule::Descent => "descent",
        }
    }

    /// True for the zero-temperature baseline.
    pub fn is_descent(&self) -> bool {
        matches!(self, Schedule::Descent)
    }

    /// About how many stages the schedule takes to cool a thousandfold (to size stages
    /// when the total number of moves is capped).
    pub fn typical_stages(&self) -> f64 {
        match *self {
            Schedule::Geometric { alpha } => (1000f64).ln() / -alpha.ln(),
            Schedule::LundyMees { beta } => 999.0 / beta,
            Schedule::LamDelosme { .. } => 150.0,
            Schedule::Huang { .. } => 80.0,
            Schedule::Descent => 30.0,
        }
    }

    /// Whether the schedule needs a total move budget to steer by.
    pub fn needs_budget(&self) -> bool {
        matches!(self, Schedule::LamDelosme { .. })
    }

    /// Target acceptance ratio of the adaptive schedule at budget fraction `f` (the
    /// trajectory of the modified Lam schedule: exponential fall from 1 to the target over
    /// the first 15 %, a plateau to 65 %, then an exponential fall by a factor of 440).
    pub fn lam_target(target: f64, f: f64) -> f64 {
        let f = f.clamp(0.0, 1.0);
        if f < 0.15 {
            target + (1.0 - target) * 560f64.powf(-f / 0.15)
        } else if f < 0.65 {
            target
        } else {
            target * 440f64.powf(-(f - 0.65) / 0.35)
        }
    }

    /// The temperature for the next stage. `t0` is the start temperature.
    pub fn next(&self, s: &StageStats, t0: f64) -> f64 {
        let t = s.temperature;
        match *self {
            Schedule::Geometric { alpha } => alpha * t,
            Schedule::LundyMees { beta } => {
                let u = t / t0;
                t0 * u / (1.0 + beta * u)
            }
            Schedule::LamDelosme { target } => {
                // Multiplicative steering toward the target acceptance: too many accepted
                // moves means too hot. Gain chosen so one stage moves T by at most ~20 %.
                let want = Schedule::lam_target(target, s.progress);
                let f = (-(s.acceptance - want) * 0.8).exp();
                t * f.clamp(0.8, 1.25)
            }
            Schedule::Huang { lambda } => {
                let f = if s.energy_sigma > 0.0 {
                    (-lambda * t / s.energy_sigma).exp()
                } else {
                    0.5
                };
                t * f.clamp(0.5, 0.99)
            }
            Schedule::Descent => 0.0,
        }
    }
}

impl fmt::Display for Schedule {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Schedule::Geometric { alpha } => write!(f, "geometric (alpha {alpha})"),
            Schedule::LundyMees { beta } => write!(f, "lundy-mees (beta {beta})"),
            Schedule::LamDelosme { target } => write!(f, "lam-delosme (target {target})"),
            Schedule::Huang { lambda } => write!(f, "huang (lambda {lambda})"),
            Schedule::Descent => write!(f, "descent"),
        }
    }
}

impl FromStr for Schedule {
    type Err = String;

    /// Parses a schedule name with its default parameters.
    fn from_str(s: &str) -> Result<Schedule, String> {
        match s.to_ascii_lowercase().as_str() {
            "geometric" => Ok(Schedule::Geometric { alpha: 0.95 }),
            "lundy-mees" => Ok(Schedule::LundyMees { beta: 0.05 }),
            "lam-delosme" => Ok(Schedule::LamDelosme { target: 0.44 }),
            "huang" => Ok(Schedule::Huang { lambda: 0.7 }),
            "descent" => Ok(Schedule::Descent),
            _ => Err(format!(
                "unknown schedule \"{s}\" (known: {})",
                Schedule::NAMES.join(", ")
            )),
        }
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

    #[test]
    fn lam_target_is_continuous_at_the_joints() {
        let t = 0.44;
        assert!((Schedule::lam_target(t, 0.0) - 1.0).abs() < 1e-12);
        assert!((Schedule::lam_target(t, 0.1499999) - t).abs() < 1.1e-3);
        assert!((Schedule::lam_target(t, 0.65) - t).abs() < 1e-12);
        assert!((Schedule::lam_target(t, 1.0) - t / 440.0).abs() < 1e-12);
    }

    #[test]
    fn every_schedule_cools() {
        let s = StageStats {
            temperature: 10.0,
            acceptance: 0.9,
            energy_sigma: 50.0,
            progress: 0.5,
        };
        for n in Schedule::NAMES {
            let sch: Schedule = n.parse().unwrap();
            assert!(sch.next(&s, 10.0) < 10.0, "{n}");
        }
    }
}
