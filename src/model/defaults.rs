//! The one set of model defaults, used by `simulate`, `fit` and `model`.
//!
//! Simulation and fitting must agree on what a "default subject" is, or a lab's first fit of
//! the shipped demo disagrees with the parameters that made it. Every command takes its
//! defaults from here; `--help` texts read the same constants.

use super::{Representation, TdParams};

/// Model bin width, seconds.
pub const DT: f64 = 0.05;
/// Stimulus representation.
pub const REPRESENTATION: Representation = Representation::Csc;
/// [`REPRESENTATION`] as the command line spells it.
pub const REPRESENTATION_NAME: &str = "csc";
/// Learning rate of the simulated learner.
pub const ALPHA: f64 = 0.02;
/// Discount per 50 ms bin of the simulated learner (τ ≈ 2.5 s): Ludvig, Sutton & Kehoe 2008's
/// value as the authors' script and two re-implementations give it (methods.md §1.3, [S]).
pub const GAMMA: f64 = 0.98;
/// Eligibility-trace decay per bin of the simulated learner: our choice (Ludvig et al. 2008
/// and 2012 used 0.95, methods.md §1.3 [S]).
pub const LAMBDA: f64 = 0.9;
/// λ of `trialdesk model` when `--lambda` is not given (the design brief's model contract).
pub const MODEL_LAMBDA: f64 = 0.0;

/// How `fit` treats λ when the user does not fix it: it is estimated like α and γ. A fixed λ
/// is a modelling choice the user states with `--lambda L`; fixing it silently at any value
/// biases α (a wrong λ makes the credit assignment per trial wrong, and α compensates).
pub const FIT_LAMBDA_FREE: bool = true;

/// The demo learner: CSC, α = 0.02, γ = 0.98, λ = 0.9 per 50 ms bin. With 3 µL rewards and
/// ~38 trials per cue a day the response moves from the reward to the p = 1 cue over days 2–5
/// and the cue response keeps growing to day 8 (chosen by running the simulator: α = 0.05
/// finished the transfer on day 2, α = 0.01 had not finished by day 8; see
/// tests/simulate_sanity.rs).
pub fn simulated_learner() -> TdParams {
    TdParams {
        alpha: ALPHA,
        gamma: GAMMA,
        lambda: LAMBDA,
        dt: DT,
        representation: REPRESENTATION,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_representation_name_parses_to_the_default() {
        assert_eq!(
            Representation::parse(REPRESENTATION_NAME),
            Some(REPRESENTATION)
        );
    }
}
