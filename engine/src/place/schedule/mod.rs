//! Cooling schedules: how the temperature falls over a run's move budget.
//!
//! Every schedule plans to use the whole budget. A run cools along a [`Leg`]: from a
//! start temperature at one move count to an end temperature at a later one (the first
//! leg spans the whole budget; a reheat or a change of schedule starts a new one over the
//! moves left or added). The schedule is the *shape* of the fall along the leg; by
//! default its rate follows from the leg's length, so two schedules given the same budget
//! cost the same. The last stage of every leg is at the end temperature.
//!
//! Each schedule is one file of this folder holding one [`Kind`]: its name, its formula,
//! its [`Param`]eters and its step (`geometric`, `lundy_mees`, `lam_delosme`, `huang`,
//! `descent`; each file's docs give its formula). The list at the `schedules!` call
//! below is the registry: the command line, the window, the settings files and the tests
//! take every schedule and parameter from it.
//!
//! **Parameters.** A parameter's default is written once, as what it is when unset
//! ([`Param::default`]): mostly *from the budget*, the value that makes the leg end at
//! its end temperature on its last move (a step the schedule measures as it goes for the
//! adaptive ones). A value set explicitly is used as the formula's
//! constant instead; the temperature then follows the formula, never below the leg's end
//! temperature, and the budget still sets the run's length.
//!
//! **Adding a schedule**: write `NAME.rs` beside this file with a `pub const KIND: Kind`
//! (name, formula, parameters, step), and add `NAME::Const` to the `schedules!` list
//! below (`Const` becomes `Schedule::Const`, the schedule with every parameter from the
//! budget).

use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use std::fmt;
use std::str::FromStr;

/// The registry: one line per schedule (`module::Const`), in the order the command line
/// and the window list them; the first is the default.
macro_rules! schedules {
    ($($module:ident :: $konst:ident),+ $(,)?) => {
        $(mod $module;)+

        /// Every schedule, in the order the command line and the window list them.
        pub const ALL: [&Kind; [$(stringify!($module)),+].len()] = [$(&$module::KIND),+];

        #[allow(non_upper_case_globals)]
        impl Schedule {
            $(
                #[doc = concat!("The `", stringify!($module), "` schedule, every parameter from the budget.")]
                pub const $konst: Schedule = Schedule::of(&$module::KIND);
            )+
            /// Every schedule of [`ALL`] with every parameter from the budget.
            pub const ALL: [Schedule; ALL.len()] = [$(Schedule::$konst),+];
        }
    };
}

schedules! {
    geometric::Geometric,
    lundy_mees::LundyMees,
    lam_delosme::LamDelosme,
    huang::Huang,
    descent::Descent,
}

/// Parameters a schedule may have at most (a [`Schedule`] is a small `Copy` value).
pub const MAX_PARAMS: usize = 4;

const _: () = {
    let mut i = 0;
    while i < ALL.len() {
        assert!(ALL[i].params.len() <= MAX_PARAMS);
        i += 1;
    }
};

/// One cooling schedule: what the command line, the window and the settings know of it,
/// and its step.
#[derive(Debug)]
pub struct Kind {
    /// The command line's and the window's name (`--schedule NAME`), lower case.
    pub name: &'static str,
    /// The key in settings files (the name earlier versions wrote), e.g. `Geometric`.
    pub key: &'static str,
    /// One line on what the schedule does (help texts).
    pub about: &'static str,
    /// The formula, as the window and the help show it.
    pub formula: &'static str,
    /// The parameters a user may set; the first is the one a run reports
    /// ([`Cooling::parameter`]).
    pub params: &'static [Param],
    /// Zero temperature: the run accepts no uphill move and samples no start
    /// temperature.
    pub zero_temperature: bool,
    /// The temperature for the next stage ([`Step`] has what the step may use).
    pub step: fn(&mut Step<'_>) -> f64,
}

/// A schedule's parameter: its names, its range, its help and what it is when unset.
#[derive(Debug)]
pub struct Param {
    /// The command line's (`--param NAME=VALUE`), the window's and the settings' name.
    pub name: &'static str,
    /// What it is, in a few words (the window's hover text, the help).
    pub label: &'static str,
    /// Its unit or scale, and how it enters the formula.
    pub help: &'static str,
    pub min: f64,
    pub max: f64,
    /// True when `min` itself is not allowed.
    pub min_open: bool,
    /// True when `max` itself is not allowed.
    pub max_open: bool,
    /// What the value is when not set, in words: "from the budget" (the value that
    /// ends the leg on time) or where the formula has it.
    pub default: &'static str,
    /// A typical value: where the window's field starts and what the help shows.
    pub example: f64,
}

/// The default of most parameters ([`Param::default`]).
pub const FROM_THE_BUDGET: &str = "from the budget";

impl Param {
    /// Whether `v` is in the parameter's range (never NaN or infinite).
    pub fn allows(&self, v: f64) -> bool {
        let lo = if self.min_open {
            v > self.min
        } else {
            v >= self.min
        };
        let hi = if self.max_open {
            v < self.max
        } else {
            v <= self.max
        };
        v.is_finite() && lo && hi
    }

    /// The range in words: "greater than 0 and less than 1".
    pub fn range_text(&self) -> String {
        let lo = if self.min_open {
            "greater than"
        } else {
            "at least"
        };
        let hi = if self.max_open {
            "less than"
        } else {
            "at most"
        };
        format!("{lo} {} and {hi} {}", self.min, self.max)
    }

    /// The range as an interval: "(0, 1)", "[0.01, 0.99]".
    pub fn interval(&self) -> String {
        let (l, r) = (
            if self.min_open { '(' } else { '[' },
            if self.max_open { ')' } else { ']' },
        );
        format!("{l}{}, {}{r}", self.min, self.max)
    }

    /// The closed range a widget may offer (open ends moved just inside).
    pub fn widget_range(&self) -> std::ops::RangeInclusive<f64> {
        let inset = (self.max - self.min) * 1e-6;
        let lo = if self.min_open {
            self.min + inset
        } else {
            self.min
        };
        let hi = if self.max_open {
            self.max - inset
        } else {
            self.max
        };
        lo..=hi
    }
}

/// Why a schedule or one of its parameters is not accepted.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum ScheduleError {
    #[error("unknown schedule \"{name}\" (known: {known})")]
    UnknownSchedule { name: String, known: String },
    #[error("the {schedule} schedule has no parameter \"{param}\" ({known})")]
    UnknownParam {
        schedule: &'static str,
        param: String,
        known: String,
    },
    #[error("{schedule} schedule: {param} must be {range}, got {value}")]
    OutOfRange {
        schedule: &'static str,
        param: &'static str,
        range: String,
        value: f64,
    },
}

/// A cooling schedule and the parameters set explicitly (the others from the budget).
/// Plain `Copy` data: it crosses the worker's channel and sits in [`AnnealOptions`].
///
/// In settings files it is the schedule's key (`"Geometric"`, as earlier versions wrote
/// it; the name is read too) or, with parameters set, `{"Geometric": {"alpha": 0.95}}`.
///
/// [`AnnealOptions`]: super::AnnealOptions
#[derive(Clone, Copy, Serialize, Deserialize)]
#[serde(try_from = "Repr", into = "Repr")]
pub struct Schedule {
    kind: &'static Kind,
    values: [Option<f64>; MAX_PARAMS],
}

/// How a [`Schedule`] is written in settings files.
#[derive(Clone, Serialize, Deserialize)]
#[serde(untagged)]
enum Repr {
    Key(String),
    WithParams(BTreeMap<String, BTreeMap<String, f64>>),
}

impl From<Schedule> for Repr {
    fn from(s: Schedule) -> Repr {
        let set: BTreeMap<String, f64> = s.explicit().map(|(p, v)| (p.name.into(), v)).collect();
        if set.is_empty() {
            Repr::Key(s.kind.key.into())
        } else {
            Repr::WithParams(BTreeMap::from([(s.kind.key.into(), set)]))
        }
    }
}

impl TryFrom<Repr> for Schedule {
    type Error = ScheduleError;
    fn try_from(r: Repr) -> Result<Schedule, ScheduleError> {
        match r {
            Repr::Key(k) => k.parse(),
            Repr::WithParams(m) => {
                let mut it = m.into_iter();
                let (Some((k, params)), None) = (it.next(), it.next()) else {
                    return Err(ScheduleError::UnknownSchedule {
                        name: "(not one schedule)".into(),
                        known: known_names(),
                    });
                };
                let mut s: Schedule = k.parse()?;
                for (p, v) in params {
                    s = s.with(&p, v)?;
                }
                Ok(s)
            }
        }
    }
}

fn known_names() -> String {
    ALL.map(|k| k.name).join(", ")
}

impl Schedule {
    /// The schedule `kind` with every parameter from the budget.
    pub const fn of(kind: &'static Kind) -> Schedule {
        Schedule {
            kind,
            values: [None; MAX_PARAMS],
        }
    }

    pub fn kind(&self) -> &'static Kind {
        self.kind
    }

    pub fn name(&self) -> &'static str {
        self.kind.name
    }

    /// The schedule's formula, as the window shows it.
    pub fn formula(&self) -> &'static str {
        self.kind.formula
    }

    pub fn params(&self) -> &'static [Param] {
        self.kind.params
    }

    /// True for the zero-temperature baseline.
    pub fn is_descent(&self) -> bool {
        self.kind.zero_temperature
    }

    /// The value of parameter `i` of [`Self::params`]: `None` is from the budget.
    pub fn value(&self, i: usize) -> Option<f64> {
        self.values.get(i).copied().flatten()
    }

    /// The parameters set explicitly, with their values.
    pub fn explicit(&self) -> impl Iterator<Item = (&'static Param, f64)> + '_ {
        self.kind
            .params
            .iter()
            .zip(self.values)
            .filter_map(|(p, v)| Some((p, v?)))
    }

    /// Sets parameter `i` (`None`: from the budget), checked against its range.
    pub fn set(&mut self, i: usize, v: Option<f64>) -> Result<(), ScheduleError> {
        let p = &self.kind.params[i];
        if let Some(v) = v
            && !p.allows(v)
        {
            return Err(ScheduleError::OutOfRange {
                schedule: self.kind.name,
                param: p.name,
                range: p.range_text(),
                value: v,
            });
        }
        self.values[i] = v;
        Ok(())
    }

    /// This schedule with the parameter called `name` set to `v`, checked.
    pub fn with(mut self, name: &str, v: f64) -> Result<Schedule, ScheduleError> {
        let Some(i) = self.kind.params.iter().position(|p| p.name == name) else {
            let known = match self.kind.params {
                [] => "it has none".to_string(),
                ps => format!(
                    "its parameters: {}",
                    ps.iter().map(|p| p.name).collect::<Vec<_>>().join(", ")
                ),
            };
            return Err(ScheduleError::UnknownParam {
                schedule: self.kind.name,
                param: name.into(),
                known,
            });
        };
        self.set(i, Some(v))?;
        Ok(self)
    }

    /// Checks every explicit value against its parameter's range.
    pub fn check(&self) -> Result<(), ScheduleError> {
        let mut s = Schedule::of(self.kind);
        for i in 0..self.kind.params.len() {
            s.set(i, self.values[i])?;
        }
        Ok(())
    }
}

impl Default for Schedule {
    fn default() -> Schedule {
        Schedule::of(ALL[0])
    }
}

impl PartialEq for Schedule {
    fn eq(&self, o: &Schedule) -> bool {
        self.kind.name == o.kind.name && self.values == o.values
    }
}

impl fmt::Debug for Schedule {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "Schedule({self})")
    }
}

/// The name, then each explicit parameter: `geometric`, `geometric alpha=0.95`.
impl fmt::Display for Schedule {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.kind.name)?;
        for (p, v) in self.explicit() {
            write!(f, " {}={v}", p.name)?;
        }
        Ok(())
    }
}

/// A schedule by its name (or settings key), every parameter from the budget.
impl FromStr for Schedule {
    type Err = ScheduleError;

    fn from_str(s: &str) -> Result<Schedule, ScheduleError> {
        let l = s.to_ascii_lowercase();
        ALL.into_iter()
            .find(|k| k.name == l || k.key == s)
            .map(Schedule::of)
            .ok_or_else(|| ScheduleError::UnknownSchedule {
                name: s.into(),
                known: known_names(),
            })
    }
}

/// The schedules and their parameters, for `--help` texts.
pub fn help_text() -> String {
    let mut h = String::new();
    for k in ALL {
        h += &format!("  {}: {}\n      {}\n", k.name, k.about, k.formula);
        for p in k.params {
            h += &format!(
                "      {}: {}, {}; in {}, default {} (e.g. {}={})\n",
                p.name,
                p.label,
                p.help,
                p.interval(),
                p.default,
                p.name,
                p.example
            );
        }
    }
    h
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

/// What a schedule learns along a leg.
#[derive(Clone, Copy, Debug, Default)]
struct Learned {
    /// Sum and count of the log step factors of the stages seen on this leg (the
    /// adaptive schedules' lambda is set from their mean).
    log_rate_sum: f64,
    rates: u32,
    /// The last stage's reported parameter and its log-T step, for display.
    last_lambda: f64,
    last_step: f64,
}

/// A schedule cooling along a leg, with what the adaptive schedules learn as they go.
#[derive(Clone, Debug)]
pub struct Cooling {
    pub schedule: Schedule,
    pub leg: Leg,
    learned: Learned,
}

/// What a schedule's step sees: the leg, the stage that ended, where it is along the leg,
/// the explicit parameter values, and the shared planning helpers.
pub struct Step<'a> {
    pub leg: Leg,
    pub stats: &'a StageStats,
    /// The temperature of the stage that ended.
    pub t: f64,
    /// Stages left on the leg, the next one included (more than one).
    pub left: f64,
    /// How far along the leg the stage's end is, 0 to 1.
    pub progress: f64,
    values: [Option<f64>; MAX_PARAMS],
    learned: &'a mut Learned,
}

impl Step<'_> {
    /// Parameter `i` of the schedule's list when set explicitly; `None`: from the budget.
    pub fn value(&self, i: usize) -> Option<f64> {
        self.values[i]
    }

    /// Records the value of the reported parameter (the first) this step used.
    pub fn report(&mut self, v: f64) {
        self.learned.last_lambda = v;
    }

    /// The stage's temperature over its energy spread, `None` without a spread (nothing
    /// accepted).
    pub fn t_over_sigma(&self) -> Option<f64> {
        let sigma = self.stats.energy_sigma;
        (sigma > 0.0 && sigma.is_finite()).then(|| self.t / sigma)
    }

    /// The adaptive step: the log-T step `lambda * rate`, from the temperature of the
    /// stage that ended, never below the leg's end. Without an explicit `lambda`, each
    /// stage sets it so that, were the rest of the leg to behave like the stages seen so
    /// far (the geometric mean of their rates), the leg would end at Te on its last move;
    /// the step then stays within a quarter and four times the even log-T step. Without
    /// a rate (`None`, or not positive), the even step.
    pub fn adaptive(&mut self, rate: Option<f64>, lambda: Option<f64>) -> f64 {
        let (t, leg) = (self.t, self.leg);
        let even = (t / leg.t_to).ln() / self.left;
        let rate = rate.unwrap_or(f64::NAN);
        let step = if rate.is_finite() && rate > 0.0 {
            match lambda {
                None => {
                    let l = &mut *self.learned;
                    l.log_rate_sum += rate.ln();
                    l.rates += 1;
                    let mean = (l.log_rate_sum / f64::from(l.rates)).exp();
                    // lambda such that the mean rate would end the leg on time.
                    let lambda = even / mean;
                    l.last_lambda = lambda;
                    (lambda * rate).clamp(even / 4.0, even * 4.0)
                }
                Some(lambda) => {
                    self.learned.last_lambda = lambda;
                    lambda * rate
                }
            }
        } else {
            // No spread seen (nothing accepted): the even step.
            even
        };
        self.learned.last_step = step;
        (t * (-step).exp()).max(leg.t_to)
    }
}

impl Cooling {
    pub fn new(schedule: Schedule, leg: Leg) -> Cooling {
        Cooling {
            schedule,
            leg,
            learned: Learned::default(),
        }
    }

    /// Starts a new leg (a reheat, a change of schedule); the adaptive schedules start
    /// learning afresh.
    pub fn set_leg(&mut self, leg: Leg) {
        *self = Cooling::new(self.schedule, leg);
    }

    /// The temperature at the start of the run or leg.
    pub fn start_temperature(&self) -> f64 {
        if self.schedule.is_descent() {
            0.0
        } else {
            self.leg.t_from
        }
    }

    /// The schedule's first parameter as the last step set it (or derived it): alpha for
    /// geometric, beta (per unit of 1/T0) for Lundy-Mees, lambda for the adaptive two.
    pub fn parameter(&self) -> f64 {
        self.learned.last_lambda
    }

    /// The temperature for the stage after the one `s` describes.
    pub fn next(&mut self, s: &StageStats) -> f64 {
        let leg = self.leg;
        if self.schedule.is_descent() {
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
        let mut step = Step {
            leg,
            stats: s,
            t,
            left,
            progress: p,
            values: self.schedule.values,
            learned: &mut self.learned,
        };
        (self.schedule.kind.step)(&mut step)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A leg from 100 to 1 over 1,000 moves, for the schedules' closed-form tests.
    pub(super) const LEG: Leg = Leg {
        t_from: 100.0,
        t_to: 1.0,
        start: 0,
        end: 1000,
    };

    #[test]
    fn names_round_trip() {
        for k in ALL {
            assert_eq!(k.name.parse::<Schedule>().unwrap().name(), k.name);
            assert_eq!(k.key.parse::<Schedule>().unwrap().name(), k.name);
        }
        let mut names: Vec<&str> = ALL.iter().map(|k| k.name).collect();
        names.sort_unstable();
        names.dedup();
        assert_eq!(names.len(), ALL.len(), "schedule names are unique");
    }

    /// Settings files: the key alone as earlier versions wrote it, or the key with the
    /// parameters set; bad values are refused with the parameter's name and range.
    #[test]
    fn schedules_read_and_write_settings() {
        let s = serde_json::to_string(&Schedule::LamDelosme).unwrap();
        assert_eq!(s, "\"LamDelosme\"");
        let g = Schedule::Geometric.with("alpha", 0.9).unwrap();
        let j = serde_json::to_string(&g).unwrap();
        assert_eq!(j, r#"{"Geometric":{"alpha":0.9}}"#);
        assert_eq!(serde_json::from_str::<Schedule>(&j).unwrap(), g);
        assert_eq!(
            serde_json::from_str::<Schedule>("\"huang\"").unwrap(),
            Schedule::Huang
        );
        let e = Schedule::Geometric
            .with("alpha", 1.5)
            .unwrap_err()
            .to_string();
        assert_eq!(
            e,
            "geometric schedule: alpha must be greater than 0 and less than 1, got 1.5"
        );
        assert!(serde_json::from_str::<Schedule>(r#"{"Geometric":{"alpha":2}}"#).is_err());
        let e = Schedule::Descent
            .with("alpha", 0.5)
            .unwrap_err()
            .to_string();
        assert!(e.contains("descent") && e.contains("alpha"), "{e}");
    }

    #[test]
    fn every_parameter_has_a_valid_example_and_unique_name() {
        for k in ALL {
            for (i, p) in k.params.iter().enumerate() {
                assert!(p.allows(p.example), "{} {}", k.name, p.name);
                assert!(!p.allows(f64::NAN));
                assert!(p.allows(*p.widget_range().start()) && p.allows(*p.widget_range().end()));
                assert!(k.params[..i].iter().all(|q| q.name != p.name));
            }
        }
    }

    pub(super) fn stats(t: f64, moves: u64) -> StageStats {
        StageStats {
            temperature: t,
            acceptance: 0.4,
            energy_sigma: 3.0 * t,
            moves,
            stage_moves: 100,
        }
    }

    /// Every schedule cools along a leg and reaches its end temperature on the leg's
    /// last stage, whatever the energy statistics, with its parameters from the budget
    /// or set to their examples.
    #[test]
    fn every_schedule_ends_its_leg_at_the_end_temperature() {
        let examples = Schedule::ALL.map(|s| {
            s.params()
                .iter()
                .fold(s, |s, p| s.with(p.name, p.example).unwrap())
        });
        for sch in Schedule::ALL.into_iter().chain(examples) {
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
