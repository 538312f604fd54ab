//! Simulation-based calibration, small CI version (Talts et al. 2018): 40 mocks drawn from the
//! SIDM fit's own prior, each fitted; the 68% and 95% intervals must cover their truths at
//! about those rates. With 40 mocks the binomial spread is ±7% (68%) and ±3.4% (95%); the test
//! requires 68% coverage in [0.45, 0.90] and 95% coverage ≥ 0.80 for every parameter (about
//! three standard deviations), and no rank histogram with χ² beyond 27.9 (p = 0.001 for 9 degrees
//! of freedom). The full run is `caldera calibrate --mocks 200` (numbers in DEVELOPERS.md).

use caldera_infer::FitConfig;
use caldera_infer::calibration::{calibration_priors, coverage_run};
use caldera_infer::sampler::RunConfig;

#[test]
fn intervals_cover_their_truths_at_the_stated_rates() {
    let config = FitConfig {
        priors: calibration_priors(),
        run: RunConfig {
            max_steps: 6_000,
            ..RunConfig::default()
        },
        seed: 7,
        map_starts: 4,
        ..FitConfig::default()
    };
    let report = coverage_run(40, 7, &config).expect("calibration runs");
    assert!(
        report.n_fitted >= 38,
        "only {} of 40 mocks fitted",
        report.n_fitted
    );
    for p in &report.parameters {
        eprintln!(
            "{:<24} 68%: {:.3}  95%: {:.3}  rank chi2 {:.1}  {:?}",
            p.name, p.coverage_68, p.coverage_95, p.rank_chi2, p.rank_histogram
        );
        assert!(
            (0.45..=0.90).contains(&p.coverage_68),
            "{}: 68% coverage {}",
            p.name,
            p.coverage_68
        );
        assert!(
            p.coverage_95 >= 0.80,
            "{}: 95% coverage {}",
            p.name,
            p.coverage_95
        );
        assert!(
            p.rank_chi2 < 27.9,
            "{}: rank histogram χ² {}",
            p.name,
            p.rank_chi2
        );
    }
}
