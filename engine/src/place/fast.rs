//! Small fast helpers of the placement's inner loops (a leaf module: it uses nothing of
//! the crate).

/// `v.round() as i64` (half away from zero, saturating, NaN to 0) without the library
/// call that `f64::round` becomes on baseline x86-64 (no SSE4.1 rounding instruction):
/// the move generator rounds four times a move. Exact, since `v - trunc(v)` is exact.
#[inline]
pub(crate) fn round(v: f64) -> i64 {
    let t = v as i64;
    let f = v - t as f64;
    if f >= 0.5 {
        t.saturating_add(1)
    } else if f <= -0.5 {
        t.saturating_sub(1)
    } else {
        t
    }
}

/// A non-binding hint to fetch the cache line holding `p` (a no-op off x86-64). Never
/// faults, whatever `p` points at.
#[inline(always)]
pub(crate) fn prefetch<T>(p: *const T) {
    #[cfg(target_arch = "x86_64")]
    {
        use std::arch::x86_64::{_MM_HINT_T0, _mm_prefetch};
        // SAFETY: a prefetch reads nothing architecturally and cannot fault.
        unsafe { _mm_prefetch::<_MM_HINT_T0>(p.cast::<i8>()) };
    }
    #[cfg(not(target_arch = "x86_64"))]
    let _ = p;
}

#[cfg(test)]
mod tests {
    use super::round;

    /// The move generator's rounding agrees with the standard library's `f64::round`
    /// (half away from zero) on halves, near-halves, zeros, large and odd values.
    #[test]
    fn round_matches_the_standard_library() {
        let mut values = vec![
            0.0,
            -0.0,
            0.5,
            -0.5,
            1.5,
            -1.5,
            2.5,
            -2.5,
            0.499_999_999_999_999_94,
            -0.499_999_999_999_999_94,
            1e15 + 0.5,
            -1e15 - 0.5,
            4_503_599_627_370_495.5,
            123.456,
            -987.654,
        ];
        let mut x = 0.1_f64;
        for _ in 0..10_000 {
            x = (x * 7.3 + 0.37) % 2000.0 - 1000.0;
            values.push(x);
            values.push(x.trunc() + 0.5);
        }
        for v in values {
            assert_eq!(round(v), v.round() as i64, "{v}");
        }
        assert_eq!(round(f64::NAN), 0);
        assert_eq!(round(f64::INFINITY), i64::MAX);
        assert_eq!(round(f64::NEG_INFINITY), i64::MIN);
    }
}
