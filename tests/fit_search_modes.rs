//! The multi-start search keeps the distinct optima it reached, and a bootstrap replicate
//! starts from all of them: a warm start from one mode alone cannot find a better one.

use trialdesk::fit::optimise::{
    evaluate, fit_multistart, refine, refine_from_optima, SAME_OPTIMUM,
};
use trialdesk::fit::synthetic::{fit_data, SyntheticSpec};
use trialdesk::fit::{FitOptions, LearnParams, ModelSpec, NoProgress};

#[test]
fn replicates_start_from_every_optimum_the_search_reached() {
    let spec = SyntheticSpec {
        sessions: 3,
        trials_per_session: 80,
        seed: 5,
        ..Default::default()
    };
    let (_, data) = fit_data(&spec);
    let opts = FitOptions::default();
    let problem = opts.problem(&data, ModelSpec::Td(opts.representation));
    let idx = data.included();
    let best = fit_multistart(&problem, &idx, &opts.search, &NoProgress).unwrap();

    // The kept end points are distinct from the optimum and from each other.
    let distinct =
        |a: &[f64], b: &[f64]| a.iter().zip(b).any(|(x, y)| (x - y).abs() >= SAME_OPTIMUM);
    for (i, o) in best.other_optima.iter().enumerate() {
        assert!(distinct(o, &best.z), "{o:?} repeats the optimum");
        for p in &best.other_optima[..i] {
            assert!(distinct(o, p), "{o:?} kept twice");
        }
    }

    // A result sitting in a poor corner (tiny α, short discount) whose other optima hold the
    // real one: the warm start alone stays far below, starting from all optima reaches it.
    let corner = problem.to_z(&LearnParams {
        alpha: 0.0005,
        gamma: 0.2,
        lambda: 0.05,
        lick: None,
    });
    let mut poor = evaluate(&problem, &corner, &idx, 0).unwrap();
    let alone = refine(
        &problem,
        &idx,
        &poor.z,
        &opts.search,
        opts.search.max_iters_refine,
    )
    .unwrap();
    assert!(
        alone.log_likelihood < best.log_likelihood - 1.0,
        "the corner is not a poor start: {} vs {}",
        alone.log_likelihood,
        best.log_likelihood
    );
    poor.other_optima = vec![best.z.clone()];
    let all = refine_from_optima(&problem, &idx, &poor, &opts.search).unwrap();
    assert!(
        all.log_likelihood >= best.log_likelihood - 0.01,
        "{} vs {}",
        all.log_likelihood,
        best.log_likelihood
    );
}
