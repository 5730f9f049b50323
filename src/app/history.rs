//! The plot history: every sample the engine sends, kept within a fixed number of points
//! however long the run, by thinning the older half whenever the store is full.

use lehr_engine::worker::PlotPoint;

/// At most this many samples are kept.
pub const CAPACITY: usize = 4096;

/// At most about this many points are drawn per curve.
pub const SHOWN: usize = 800;

/// Plot samples of one run, thinned as the run grows so memory stays bounded. Samples are
/// kept at a stride that doubles each time the store fills: the curves keep their shape,
/// the first and the latest sample are always kept.
#[derive(Debug, Default)]
pub struct History {
    points: Vec<PlotPoint>,
    /// Keep one incoming sample in `stride`.
    stride: u64,
    /// Samples seen since the last one kept.
    skipped: u64,
    /// The newest sample, always shown even when the stride drops it.
    latest: Option<PlotPoint>,
}

impl History {
    pub fn new() -> History {
        History {
            stride: 1,
            ..History::default()
        }
    }

    pub fn clear(&mut self) {
        *self = History::new();
    }

    pub fn push(&mut self, p: PlotPoint) {
        self.latest = Some(p);
        self.skipped += 1;
        if self.skipped < self.stride.max(1) && !self.points.is_empty() {
            return;
        }
        self.skipped = 0;
        self.points.push(p);
        if self.points.len() >= CAPACITY {
            // Keep every other point (the first one included), then keep half as many
            // incoming samples.
            let mut i = 0;
            self.points.retain(|_| {
                i += 1;
                i % 2 == 1
            });
            self.stride = self.stride.max(1) * 2;
        }
    }

    /// The kept samples in move order, ending with the newest one.
    pub fn iter(&self) -> impl Iterator<Item = &PlotPoint> {
        let tail = match (self.latest.as_ref(), self.points.last()) {
            (Some(l), Some(k)) if l.moves != k.moves => Some(l),
            _ => None,
        };
        self.points.iter().chain(tail)
    }

    #[cfg(test)]
    pub fn len(&self) -> usize {
        self.iter().count()
    }

    #[cfg(test)]
    pub fn is_empty(&self) -> bool {
        self.points.is_empty()
    }

    /// `[moves, f(sample)]` pairs for a plot line: at most about [`SHOWN`] of them (a
    /// plot is a few hundred pixels wide), the newest always included.
    pub fn series(&self, f: impl Fn(&PlotPoint) -> f64) -> Vec<[f64; 2]> {
        let n = self.points.len();
        let step = n.div_ceil(SHOWN).max(1);
        let mut out: Vec<[f64; 2]> = self
            .points
            .iter()
            .step_by(step)
            .map(|p| [p.moves as f64, f(p)])
            .collect();
        if let Some(l) = self.iter().last()
            && out.last().is_none_or(|o| o[0] != l.moves as f64)
        {
            out.push([l.moves as f64, f(l)]);
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn sample(m: u64) -> PlotPoint {
        PlotPoint {
            moves: m,
            energy: m as f64,
            ..PlotPoint::default()
        }
    }

    #[test]
    fn memory_stays_bounded_and_the_ends_are_kept() {
        let mut h = History::new();
        for m in 1..=1_000_000 {
            h.push(sample(m));
        }
        let pts: Vec<_> = h.iter().copied().collect();
        assert!(pts.len() <= CAPACITY + 1, "{} points", pts.len());
        assert!(pts.len() >= CAPACITY / 4, "{} points", pts.len());
        assert_eq!(pts.first().unwrap().moves, 1);
        assert_eq!(pts.last().unwrap().moves, 1_000_000);
        assert!(pts.windows(2).all(|w| w[0].moves < w[1].moves));
    }

    #[test]
    fn short_runs_keep_every_sample() {
        let mut h = History::new();
        for m in 1..=100 {
            h.push(sample(m));
        }
        assert_eq!(h.len(), 100);
        assert_eq!(h.series(|p| p.energy)[41], [42.0, 42.0]);
        for m in 101..=3000 {
            h.push(sample(m));
        }
        let s = h.series(|p| p.energy);
        assert!(s.len() <= SHOWN + 1, "{}", s.len());
        assert_eq!(s.last().unwrap()[0], 3000.0);
        h.clear();
        assert!(h.is_empty());
    }

    #[test]
    fn thinned_samples_are_spread_evenly() {
        let mut h = History::new();
        for m in 1..=100_000 {
            h.push(sample(m));
        }
        let pts: Vec<_> = h.points.iter().map(|p| p.moves).collect();
        // Gaps between kept samples differ by at most a factor of two (the stride doubles).
        let gaps: Vec<u64> = pts.windows(2).map(|w| w[1] - w[0]).collect();
        let (lo, hi) = (gaps.iter().min().unwrap(), gaps.iter().max().unwrap());
        assert!(*hi <= 2 * lo.max(&1) + 1, "gaps {lo}..{hi}");
    }
}
