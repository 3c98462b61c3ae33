//! Parameter recovery on synthetic subjects drawn from the fitter's own observation model
//! (Wilson & Collins 2019, eLife 8:e49547: simulate, refit, compare with the truth).

use trialdesk::fit::synthetic::{fit_data, SyntheticSpec};
use trialdesk::fit::{run_fit, FitOptions, NoProgress};

fn quick_opts() -> FitOptions {
    FitOptions {
        bootstrap: 0,
        compare: false,
        ..Default::default()
    }
}

#[test]
fn recovers_alpha_and_gamma_csc() {
    let spec = SyntheticSpec::default();
    let (_, data) = fit_data(&spec);
    let t = std::time::Instant::now();
    let out = run_fit(&data, &quick_opts(), &NoProgress).expect("fit");
    eprintln!(
        "{:?} {:?} evals {} in {:?}",
        out.best.params,
        out.best.linear,
        out.best.evaluations,
        t.elapsed()
    );
    assert!((out.best.params.alpha - spec.alpha).abs() < 0.02);
}
