//! Exact medians for the robust scale (MAD) of IRLS: a plain select, and a one-pass bracketed
//! select for when a close guess is known.

/// Median of a buffer, reordering it (mean of the two middle values for an even count, as
/// numpy does). Values must not be NaN.
pub fn median_of(v: &mut [f64]) -> f64 {
    let n = v.len();
    let mid = n / 2;
    let (lower, m, _) = v.select_nth_unstable_by(mid, f64::total_cmp);
    let upper = *m;
    if n % 2 == 1 {
        upper
    } else {
        let below = lower.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        0.5 * (below + upper)
    }
}

/// One-pass exact median of non-negative values near a known guess: values within a few % of
/// the guess are kept in a scratch buffer and the rest only counted, then the median is selected
/// among the kept few. IRLS recomputes this every round and the answer moves little between
/// rounds, so the bracket almost always holds it.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Bracket {
    lo: f64,
    hi: f64,
    below: usize,
    kept: usize,
}

impl Bracket {
    /// Values within guess·(1 ± width).
    pub(crate) fn around(guess: f64, width: f64) -> Bracket {
        Bracket {
            lo: guess * (1.0 - width),
            hi: guess * (1.0 + width),
            below: 0,
            kept: 0,
        }
    }

    /// Branch-free: about half the values fall below the bracket, in no pattern.
    #[inline(always)]
    pub(crate) fn push(&mut self, v: f64, scratch: &mut [f64]) {
        let is_below = v < self.lo;
        self.below += usize::from(is_below);
        scratch[self.kept] = v;
        self.kept += usize::from(!is_below && v <= self.hi);
    }

    /// The median of the n values pushed, when the bracket holds it.
    pub(crate) fn median(&self, n: usize, scratch: &mut [f64]) -> Option<f64> {
        let mid = n / 2;
        if !(self.below <= mid && mid < self.below + self.kept) {
            return None;
        }
        let rank = mid - self.below;
        let (lower, m, _) = scratch[..self.kept].select_nth_unstable_by(rank, f64::total_cmp);
        let upper = *m;
        if n % 2 == 1 {
            return Some(upper);
        }
        // The value just below the median sits below the bracket (not kept): let the caller
        // do a full select. Tracking the largest value below would cost a branch per sample.
        if rank == 0 {
            return None;
        }
        let lower_max = lower.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        Some(0.5 * (lower_max + upper))
    }
}

/// Exact median of the n non-negative values `abs_value(i)`, using `scratch` (≥ n values):
/// one bracketed pass around `hint` when given (see [`Bracket`]), else or when the bracket
/// misses, a full select.
pub(crate) fn median_abs(
    n: usize,
    abs_value: impl Fn(usize) -> f64,
    scratch: &mut [f64],
    hint: Option<f64>,
) -> f64 {
    if let Some(h) = hint.filter(|h| *h > 0.0 && h.is_finite()) {
        let mut br = Bracket::around(h, 0.05);
        for i in 0..n {
            br.push(abs_value(i), scratch);
        }
        if let Some(m) = br.median(n, scratch) {
            return m;
        }
    }
    for (i, s) in scratch[..n].iter_mut().enumerate() {
        *s = abs_value(i);
    }
    median_of(&mut scratch[..n])
}
