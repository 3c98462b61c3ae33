//! Bin rounding of the model contract on realistic session clocks.

use proptest::prelude::*;
use trialdesk::model::layout::{base_bins, bin_of};

proptest! {
    /// An event exactly j bins after the alignment time (as a rig writes it: t0 + j·dt,
    /// rounded to the session clock) lands in bin j. The brief's 1e-9 tolerance absorbs the
    /// rounding of t − t0 for clocks up to 1e5 s (a day of recording): the f64 spacing there
    /// is 1.5e-11 s, i.e. 3e-10 bins at dt = 0.05 s.
    #[test]
    fn event_on_a_bin_edge_lands_in_that_bin(
        t0 in 0.0f64..1e5,
        j in 0usize..200,
        dt in prop::sample::select(vec![0.01, 0.02, 0.05, 0.1, 0.2]),
    ) {
        let t = t0 + j as f64 * dt;
        prop_assert_eq!(bin_of(t, t0, dt), j as i64);
    }

    /// An event just inside a bin (a tenth of a bin past its start) is never pushed out.
    #[test]
    fn event_inside_a_bin_stays_there(t0 in 0.0f64..1e5, j in 0usize..200) {
        let dt = 0.05;
        prop_assert_eq!(bin_of(t0 + (j as f64 + 0.1) * dt, t0, dt), j as i64);
    }

    /// K = ceil((D + post)/dt − 1e-9): a delay on the bin grid gives exactly (D + 1 s)/dt
    /// bins, not one more.
    #[test]
    fn span_length_on_the_grid(n in 0usize..200) {
        let dt = 0.05;
        prop_assert_eq!(base_bins(n as f64 * dt, dt), n + 20);
    }
}
