//! Benchmark of `trialdesk fit` on a large in-memory subject (filled in below).

fn main() {}
