//! Stimulus representations: which features are active in bin k of a trial, and how much.
//!
//! Features are sparse: a bin touches at most one cue's features plus the reward's
//! microstimuli, so the learner only ever visits those.

use super::layout::{SpanEvents, TrialSpan};

/// Parameters of the microstimulus representation (Ludvig, Sutton & Kehoe 2008, *Neural
/// Comput* 20:3034).
///
/// Defaults: σ = 0.08 and d = 0.985 per 50 ms are the values of Ludvig et al. 2008 and 2012 as
/// the authors' script and two re-implementations give them (methods.md §1.3, tagged [S]:
/// secondary sources, not read in the papers). m = 20 is the design brief's choice, between the
/// 50 of the 2008 paper and the 6 of the 2012 one (same source and tag).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MicrostimulusParams {
    /// Number of microstimuli per stimulus.
    pub m: usize,
    /// Width of each basis function on the trace-height axis.
    pub sigma: f64,
    /// Trace decay per 50 ms; rescaled for other bin widths as d^(dt/0.05).
    pub decay_per_50ms: f64,
}

impl Default for MicrostimulusParams {
    fn default() -> Self {
        MicrostimulusParams {
            m: 20,
            sigma: 0.08,
            decay_per_50ms: 0.985,
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Representation {
    /// Complete serial compound (tapped delay line): one feature per cue and bin index
    /// (Sutton & Barto 1990; Montague, Dayan & Sejnowski 1996; Schultz, Dayan & Montague
    /// 1997; methods.md §1.3).
    Csc,
    /// One feature per cue, 1 in every bin of its trials (the presence representation of
    /// Ludvig et al. 2012, there at level 0.2; methods.md §1.3, [S]).
    Presence,
    /// Microstimuli of a decaying memory trace (Ludvig, Sutton & Kehoe 2008).
    Microstimulus(MicrostimulusParams),
}

impl Representation {
    pub fn name(&self) -> &'static str {
        match self {
            Representation::Csc => "csc",
            Representation::Presence => "presence",
            Representation::Microstimulus(_) => "microstimulus",
        }
    }

    pub fn parse(s: &str) -> Option<Representation> {
        match s {
            "csc" => Some(Representation::Csc),
            "presence" => Some(Representation::Presence),
            "microstimulus" | "ms" => Some(Representation::Microstimulus(Default::default())),
            _ => None,
        }
    }
}

/// Microstimulus heights x(i) = y·(1/√(2π))·exp(−(y − i/m)²/(2σ²)), i = 1..m, for a trace of
/// height y (Ludvig, Sutton & Kehoe 2008; the prefactor 1/√(2π), not 1/(σ√(2π)), as in the
/// authors' script, methods.md §1.3 [S], and the design brief).
pub fn microstimuli(y: f64, p: &MicrostimulusParams, out: &mut Vec<f64>) {
    let norm = 1.0 / (2.0 * std::f64::consts::PI).sqrt();
    out.clear();
    for i in 1..=p.m {
        let c = i as f64 / p.m as f64;
        out.push(y * norm * (-(y - c).powi(2) / (2.0 * p.sigma * p.sigma)).exp());
    }
}

/// The feature space of one subject under one representation: its size and, per bin, the
/// active (index, value) pairs.
#[derive(Debug, Clone)]
pub struct FeatureSpace {
    repr: Representation,
    n_cues: usize,
    /// CSC: first feature index of each cue's delay line, and the line's length.
    csc_offset: Vec<usize>,
    /// Microstimulus heights by bins since onset: `ms_table[k * m + i]`.
    ms_table: Vec<f64>,
    ms_m: usize,
    size: usize,
}

impl FeatureSpace {
    pub fn new(spans: &[TrialSpan], n_cues: usize, repr: Representation, dt: f64) -> Self {
        let max_bins = spans.iter().map(|s| s.n_bins).max().unwrap_or(0);
        let mut fs = FeatureSpace {
            repr,
            n_cues,
            csc_offset: Vec::new(),
            ms_table: Vec::new(),
            ms_m: 0,
            size: 0,
        };
        match repr {
            Representation::Csc => {
                let mut len = vec![0usize; n_cues];
                for s in spans {
                    match &s.events {
                        None => {
                            if let Some(c) = s.cue {
                                len[c] = len[c].max(s.n_bins);
                            }
                        }
                        Some(ev) => {
                            for c in &ev.cues {
                                len[c.cue] = len[c.cue].max(s.n_bins - c.onset);
                            }
                        }
                    }
                }
                let mut off = 0;
                for l in len {
                    fs.csc_offset.push(off);
                    off += l;
                }
                fs.size = off;
            }
            Representation::Presence => fs.size = n_cues,
            Representation::Microstimulus(p) => {
                let d = p.decay_per_50ms.powf(dt / 0.05);
                let mut buf = Vec::with_capacity(p.m);
                for k in 0..max_bins {
                    microstimuli(d.powi(k as i32), &p, &mut buf);
                    fs.ms_table.extend_from_slice(&buf);
                }
                fs.ms_m = p.m;
                fs.size = (n_cues + 1) * p.m;
            }
        }
        fs
    }

    /// Number of weights.
    pub fn size(&self) -> usize {
        self.size
    }

    /// Append the active features of bin `k` of `span` to `out`.
    #[inline]
    pub fn active(&self, span: &TrialSpan, k: usize, out: &mut Vec<(u32, f64)>) {
        if let Some(ev) = &span.events {
            return self.active_events(ev, k, out);
        }
        match self.repr {
            Representation::Csc => {
                if let Some(c) = span.cue {
                    out.push(((self.csc_offset[c] + k) as u32, 1.0));
                }
            }
            Representation::Presence => {
                if let Some(c) = span.cue {
                    out.push((c as u32, 1.0));
                }
            }
            Representation::Microstimulus(_) => {
                let m = self.ms_m;
                if let Some(c) = span.cue {
                    let row = &self.ms_table[k * m..(k + 1) * m];
                    out.extend(
                        row.iter()
                            .enumerate()
                            .map(|(i, &v)| ((c * m + i) as u32, v)),
                    );
                }
                if let Some(rb) = span.reward_bin {
                    if k >= rb {
                        let row = &self.ms_table[(k - rb) * m..(k - rb + 1) * m];
                        let base = self.n_cues * m;
                        out.extend(row.iter().enumerate().map(|(i, &v)| ((base + i) as u32, v)));
                    }
                }
            }
        }
    }
}

impl FeatureSpace {
    /// Summed features of an event list: csc one-hot (cue, k − o_c) for k ≥ o_c, presence 1 for
    /// o_c ≤ k < off_c, microstimuli of y = d^(k − o_c) for k ≥ o_c; every delivered reward's
    /// microstimuli from its bin on. The same feature may come from two events (a cue given
    /// twice): its values add up, entry by entry.
    fn active_events(&self, ev: &SpanEvents, k: usize, out: &mut Vec<(u32, f64)>) {
        let start = out.len();
        match self.repr {
            Representation::Csc => {
                for c in ev.cues.iter().filter(|c| k >= c.onset) {
                    push_add(
                        out,
                        start,
                        (self.csc_offset[c.cue] + k - c.onset) as u32,
                        1.0,
                    );
                }
            }
            Representation::Presence => {
                for c in ev.cues.iter().filter(|c| c.onset <= k && k < c.offset) {
                    push_add(out, start, c.cue as u32, 1.0);
                }
            }
            Representation::Microstimulus(_) => {
                let m = self.ms_m;
                for c in ev.cues.iter().filter(|c| k >= c.onset) {
                    let row = &self.ms_table[(k - c.onset) * m..(k - c.onset + 1) * m];
                    for (i, &v) in row.iter().enumerate() {
                        push_add(out, start, (c.cue * m + i) as u32, v);
                    }
                }
                let base = self.n_cues * m;
                for &(rb, _) in ev.rewards.iter().filter(|&&(rb, _)| k >= rb) {
                    let row = &self.ms_table[(k - rb) * m..(k - rb + 1) * m];
                    for (i, &v) in row.iter().enumerate() {
                        push_add(out, start, (base + i) as u32, v);
                    }
                }
            }
        }
    }
}

/// Add `v` to feature `i` among `out[start..]`, or append it (keeps indices distinct).
fn push_add(out: &mut Vec<(u32, f64)>, start: usize, i: u32, v: f64) {
    match out[start..].iter_mut().find(|e| e.0 == i) {
        Some(e) => e.1 += v,
        None => out.push((i, v)),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Check values from ../shared/methods.md §3.5 (computed, m = 10, σ = 0.08, d = 0.985).
    #[test]
    fn microstimulus_heights_match_worked_values() {
        let p = MicrostimulusParams {
            m: 10,
            sigma: 0.08,
            decay_per_50ms: 0.985,
        };
        let mut x = Vec::new();
        microstimuli(1.0, &p, &mut x);
        assert!((x[9] - 0.39894).abs() < 1e-5);
        assert!((x[8] - 0.18265).abs() < 1e-5);
        assert!((x[7] - 0.01753).abs() < 1e-5);
        microstimuli(0.985f64.powi(20), &p, &mut x);
        assert!((x[6] - 0.26162).abs() < 1e-5);
        assert!((x[7] - 0.22077).abs() < 1e-5);
        assert!((x[5] - 0.06498).abs() < 1e-5);
    }
}
