//! Lam and Delosme (DAC 1988): steps in 1/T by the energy's spread and the acceptance
//! ratio, slowest where the specific heat peaks.
//!
//! With s = 1/T: s(k+1) = s(k) + lambda (1 / sigma) (1 / (s^2 sigma^2)) G(rho),
//! G(rho) = 4 rho (1 - rho)^2 / (2 - rho)^2 (rho the stage's acceptance ratio): even
//! smaller steps at high specific heat, largest where the acceptance is near G's peak,
//! rho* = (5 - sqrt 17) / 2 = 0.438. The step ds is a log-T step of
//! s ds = lambda G T^3 / sigma^3 (for small steps). From the budget, lambda is set each
//! stage so the leg ends on time ([`Step::adaptive`]).
//!
//! `target` moves the peak (our own extension): G is taken at rho^(ln rho* / ln target),
//! which is rho* where rho is the target; unset, G is taken at rho itself.

use super::{FROM_THE_BUDGET, Kind, Param, Step};

pub const KIND: Kind = Kind {
    name: "lam-delosme",
    key: "LamDelosme",
    about: "adaptive: steps in 1/T by the energy's spread and the acceptance (Lam and Delosme, 1988)",
    formula: "s = 1/T: s(k+1) = s(k) + lambda G(rho) / (s^2 sigma^3), \
              G(rho) = 4 rho (1 - rho)^2 / (2 - rho)^2",
    params: &[
        Param {
            name: "lambda",
            label: "step size",
            help: "the log-T step is lambda G(rho) (T / sigma)^3 (sigma: the stage's energy spread)",
            min: 0.0,
            max: 1000.0,
            min_open: true,
            max_open: false,
            default: FROM_THE_BUDGET,
            example: 0.5,
        },
        Param {
            name: "target",
            label: "target acceptance",
            help: "the acceptance ratio at which the steps are largest",
            min: 0.01,
            max: 0.99,
            min_open: false,
            max_open: false,
            default: "0.438, G's own peak",
            example: 0.44,
        },
    ],
    zero_temperature: false,
    step,
};

/// Where G peaks: (5 - sqrt 17) / 2 (G' = 0 where rho^2 - 5 rho + 2 = 0).
pub const PEAK: f64 = 0.438_447_187_191_169_7;

/// Lam and Delosme's quality factor of a stage with acceptance ratio `rho`:
/// G(rho) = 4 rho (1 - rho)^2 / (2 - rho)^2 (from memory, see CHECK-VALUES.md; it
/// peaks at [`PEAK`]).
pub fn lam_quality(rho: f64) -> f64 {
    let r = rho.clamp(0.0, 1.0);
    4.0 * r * (1.0 - r).powi(2) / (2.0 - r).powi(2)
}

/// G with its peak moved to `target` (see the module docs).
fn quality(rho: f64, target: Option<f64>) -> f64 {
    match target {
        None => lam_quality(rho),
        Some(p) => lam_quality(rho.clamp(0.0, 1.0).powf(PEAK.ln() / p.ln())),
    }
}

fn step(c: &mut Step<'_>) -> f64 {
    let g = quality(c.stats.acceptance, c.value(1));
    let rate = c.t_over_sigma().map(|x| g.max(1e-6) * x * x * x);
    let lambda = c.value(0);
    c.adaptive(rate, lambda)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn argmax(f: impl Fn(f64) -> f64) -> f64 {
        (1..1000)
            .map(|i| f64::from(i) / 1000.0)
            .max_by(|a, b| f(*a).total_cmp(&f(*b)))
            .unwrap()
    }

    /// Lam and Delosme's quality factor peaks near an acceptance of 0.44 (computed
    /// maximum 0.438, CHECK-VALUES.md).
    #[test]
    fn lam_quality_peaks_near_0_44() {
        let best = argmax(lam_quality);
        assert!((best - 0.438).abs() < 0.002, "{best}");
        assert!((PEAK - (5.0 - 17f64.sqrt()) / 2.0).abs() < 1e-15);
    }

    /// A target acceptance moves the peak there.
    #[test]
    fn the_target_moves_the_peak() {
        for target in [0.2, 0.44, 0.7] {
            let best = argmax(|r| quality(r, Some(target)));
            assert!((best - target).abs() < 0.002, "{target}: {best}");
        }
    }
}
