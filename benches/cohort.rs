//! Cohort fitting benchmark (work in progress).
fn main() {}
