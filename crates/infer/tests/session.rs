//! The application session round-trips with priors, settings and fit results.

use caldera_data::session::{HaloModel, load_session, parse_session, save_session};
use caldera_data::{ReadOptions, read_table};
use caldera_infer::sampler::{RunConfig, Silent};
use caldera_infer::session::Session;
use caldera_infer::{FitConfig, fit_galaxy};

#[test]
fn a_session_with_priors_and_results_round_trips() {
    let path =
        std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("../../demo_galaxies/kiln_d06.ecsv");
    let table = read_table(&path, &ReadOptions::default()).expect("demo table");
    let mut config = FitConfig {
        run: RunConfig {
            max_steps: 600,
            min_steps: 200,
            ..RunConfig::default()
        },
        seed: 5,
        ..FitConfig::default()
    };
    config.priors.cross_section.max_cm2_g = 30.0;
    config.priors.error_floor_kms = 1.5;
    let result = fit_galaxy(&table, HaloModel::Burkert, &config, &mut Silent).expect("fit");
    let mut session = Session {
        catalogue: Some(path.clone()),
        fit: config,
        models: vec![HaloModel::Sidm, HaloModel::Burkert],
        selected: Some(table.meta.name.clone()),
        ..Session::default()
    };
    session.store_result(result.summary.clone());
    session.store_result(result.summary.clone());
    assert_eq!(
        session.results.len(),
        1,
        "a second store replaces the first"
    );

    let dir = std::env::temp_dir().join(format!("caldera-app-session-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("temp dir");
    let file = dir.join("work.ron");
    save_session(&file, &session).expect("saves");
    let back: Session = load_session(&file).expect("loads");
    assert_eq!(back, session);
    assert_eq!(
        back.result("Kiln D06", HaloModel::Burkert),
        Some(&result.summary)
    );
    // A session never replaces the table it works on.
    assert!(save_session(&path, &session).is_err());
    // A version-1 file written before priors and results existed still loads, with defaults.
    let old: Session = parse_session("Session(version: 1, catalogue: None)", &file).expect("loads");
    assert_eq!(old.fit, FitConfig::default());
    assert_eq!(old.models, vec![HaloModel::Sidm]);
    std::fs::remove_dir_all(&dir).ok();
}
