//! The mock generator: invented galaxies with known halos, baryons and errors, for the demo
//! catalogue, recovery tests and calibration. Deterministic for a seed.
//!
//! The table's disk and bulge columns are velocities for Υ = 1 (as in observed tables): the
//! stellar disk of mass M_* is written as V_*(R)/√Υ_disk, so a fit with the true Υ recovers it.
//! Errors: σ_i = √((f V_true)² + floor²) (fractional and floor terms in quadrature); the observed
//! velocity is V_true + σ_i · N(0, 1).

use caldera_physics::{
    Branch, Burkert, Cosmology, CrossSection, Einasto, ExponentialDisk, HaloProfile, Hernquist,
    Nfw, PhysicsError, PseudoIsothermal, SidmSetup, SidmSummary, VirialQuantities, sidm,
};
use rand::SeedableRng;
use rand_distr::{Distribution, StandardNormal};
use rand_xoshiro::Xoshiro256PlusPlus;
use serde::{Deserialize, Serialize};

use crate::table::{GalaxyMeta, GalaxyTable};

/// The halo of a mock galaxy.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "kebab-case")]
pub enum MockHalo {
    Nfw {
        v200_kms: f64,
        c200: f64,
    },
    Burkert {
        rho0_msun_kpc3: f64,
        r0_kpc: f64,
    },
    PseudoIsothermal {
        rho0_msun_kpc3: f64,
        core_radius_kpc: f64,
    },
    /// SIDM from the core: central density and dispersion.
    SidmCoreFirst {
        rho0_msun_kpc3: f64,
        sigma0_kms: f64,
        sigma_m_cm2_g: f64,
    },
    /// Einasto (1965) from V200, c200 = r200/r₋₂ and the shape α.
    Einasto {
        v200_kms: f64,
        c200: f64,
        alpha: f64,
    },
    /// SIDM from the outer NFW halo (V200, c200); `branch` 0 is the lowest-density core.
    SidmHaloFirst {
        v200_kms: f64,
        c200: f64,
        sigma_m_cm2_g: f64,
        branch: usize,
    },
}

/// An exponential disk of gas or stars.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct MockDisk {
    pub mass_msun: f64,
    pub scale_length_kpc: f64,
}

/// A Hernquist bulge.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct MockBulge {
    pub mass_msun: f64,
    pub scale_radius_kpc: f64,
}

/// Everything that defines a mock galaxy.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MockSpec {
    pub name: String,
    pub seed: u64,
    pub halo: MockHalo,
    pub age_gyr: f64,
    pub hubble_kms_mpc: f64,
    pub gas: Option<MockDisk>,
    pub stars: Option<MockDisk>,
    pub bulge: Option<MockBulge>,
    pub upsilon_disk: f64,
    pub upsilon_bulge: f64,
    pub r_min_kpc: f64,
    pub r_max_kpc: f64,
    pub n_points: usize,
    pub error_fraction: f64,
    pub error_floor_kms: f64,
    pub distance_mpc: f64,
    pub distance_err_mpc: f64,
    pub inclination_deg: f64,
    pub inclination_err_deg: f64,
    pub notes: String,
    /// A velocity-dependent σ(v)/m for SIDM halos, replacing the halo's constant σ/m.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub velocity_dependence: Option<CrossSection>,
}

/// The true values behind a mock table (written as its truth file).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MockTruth {
    pub spec: MockSpec,
    /// V200, c200, r200, M200 of the halo (the outer NFW halo for SIDM); None for cored
    /// empirical halos.
    pub virial: Option<VirialQuantities>,
    /// The SIDM halo's derived quantities (r1, ρ0, σ0, ⟨v_rel⟩, ...), when the halo is SIDM.
    pub sidm: Option<SidmSummary>,
    pub radius_kpc: Vec<f64>,
    pub v_true_kms: Vec<f64>,
    pub v_halo_kms: Vec<f64>,
    pub v_max_kms: f64,
}

/// Why a mock could not be made.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum MockError {
    #[error("invalid mock specification: {0}")]
    Spec(String),
    #[error("cannot build the mock's mass model")]
    Model(#[from] PhysicsError),
}

fn check(spec: &MockSpec) -> Result<(), MockError> {
    let positive = [
        ("r_min_kpc", spec.r_min_kpc),
        ("r_max_kpc", spec.r_max_kpc),
        ("age_gyr", spec.age_gyr),
        ("hubble_kms_mpc", spec.hubble_kms_mpc),
        ("distance_mpc", spec.distance_mpc),
    ];
    for (name, value) in positive {
        if !(value.is_finite() && value > 0.0) {
            return Err(MockError::Spec(format!(
                "{name} must be positive, got {value}"
            )));
        }
    }
    let non_negative = [
        ("error_fraction", spec.error_fraction),
        ("error_floor_kms", spec.error_floor_kms),
        ("upsilon_disk", spec.upsilon_disk),
        ("upsilon_bulge", spec.upsilon_bulge),
        ("distance_err_mpc", spec.distance_err_mpc),
        ("inclination_err_deg", spec.inclination_err_deg),
    ];
    for (name, value) in non_negative {
        if !(value.is_finite() && value >= 0.0) {
            return Err(MockError::Spec(format!("{name} must be ≥ 0, got {value}")));
        }
    }
    if spec.r_max_kpc <= spec.r_min_kpc {
        return Err(MockError::Spec("r_max_kpc must exceed r_min_kpc".into()));
    }
    if spec.n_points < 2 {
        return Err(MockError::Spec("n_points must be at least 2".into()));
    }
    if spec.error_fraction == 0.0 && spec.error_floor_kms == 0.0 {
        return Err(MockError::Spec(
            "an error model with zero fraction and zero floor gives zero errors".into(),
        ));
    }
    if spec.upsilon_disk == 0.0 && spec.stars.is_some() {
        return Err(MockError::Spec(
            "a stellar disk needs upsilon_disk > 0".into(),
        ));
    }
    if spec.upsilon_bulge == 0.0 && spec.bulge.is_some() {
        return Err(MockError::Spec("a bulge needs upsilon_bulge > 0".into()));
    }
    if !(0.0..=90.0).contains(&spec.inclination_deg) {
        return Err(MockError::Spec(
            "inclination_deg must lie in [0, 90]".into(),
        ));
    }
    Ok(())
}

/// Generates the mock table and its truth.
pub fn generate(spec: &MockSpec) -> Result<(GalaxyTable, MockTruth), MockError> {
    check(spec)?;
    let n = spec.n_points;
    let step = (spec.r_max_kpc - spec.r_min_kpc) / (n - 1) as f64;
    let radius_kpc: Vec<f64> = (0..n).map(|i| spec.r_min_kpc + step * i as f64).collect();

    let disk_velocity = |disk: Option<MockDisk>, scale: f64| -> Result<Vec<f64>, PhysicsError> {
        match disk {
            None => Ok(vec![0.0; n]),
            Some(d) => {
                let model = ExponentialDisk::new(d.mass_msun, d.scale_length_kpc)?;
                Ok(radius_kpc
                    .iter()
                    .map(|&r| model.v_squared_kms2(r).max(0.0).sqrt() * scale)
                    .collect())
            }
        }
    };
    let v_gas_kms = disk_velocity(spec.gas, 1.0)?;
    let v_disk_kms = disk_velocity(
        spec.stars,
        if spec.upsilon_disk > 0.0 {
            1.0 / spec.upsilon_disk.sqrt()
        } else {
            0.0
        },
    )?;
    let v_bulge_kms = match spec.bulge {
        None => None,
        Some(b) => {
            let model = Hernquist::new(b.mass_msun, b.scale_radius_kpc)?;
            let scale = 1.0 / spec.upsilon_bulge.sqrt();
            Some(
                radius_kpc
                    .iter()
                    .map(|&r| model.v_squared_kms2(r).sqrt() * scale)
                    .collect::<Vec<f64>>(),
            )
        }
    };

    let mut table = GalaxyTable {
        meta: GalaxyMeta {
            name: spec.name.clone(),
            distance_mpc: Some(spec.distance_mpc),
            distance_err_mpc: Some(spec.distance_err_mpc),
            inclination_deg: Some(spec.inclination_deg),
            inclination_err_deg: Some(spec.inclination_err_deg),
            age_gyr: Some(spec.age_gyr),
            luminosity_lsun: None,
            notes: spec.notes.clone(),
        },
        source: None,
        radius_kpc: radius_kpc.clone(),
        v_obs_kms: vec![0.0; n],
        v_err_kms: vec![0.0; n],
        v_gas_kms,
        v_disk_kms,
        v_bulge_kms,
        warnings: Vec::new(),
    };
    // The SIDM halo sees exactly the baryonic mass model a fit of this table will use.
    let baryons = table.baryons(spec.upsilon_disk, spec.upsilon_bulge)?;
    let cosmology = Cosmology::with_hubble(spec.hubble_kms_mpc)?;
    let sidm_setup = |sigma_m: f64| -> Result<SidmSetup<'_>, PhysicsError> {
        Ok(SidmSetup {
            cross_section: match spec.velocity_dependence {
                Some(model) => model,
                None => CrossSection::constant(sigma_m)?,
            },
            age_gyr: spec.age_gyr,
            baryons: &baryons,
            cosmology,
        })
    };
    let (halo, virial, sidm_summary): (Box<dyn HaloProfile>, _, _) = match spec.halo {
        MockHalo::Nfw { v200_kms, c200 } => {
            let nfw = Nfw::from_v200_c200(v200_kms, c200, &cosmology)?;
            let virial = nfw.virial(&cosmology)?;
            (Box::new(nfw), Some(virial), None)
        }
        MockHalo::Burkert {
            rho0_msun_kpc3,
            r0_kpc,
        } => (Box::new(Burkert::new(rho0_msun_kpc3, r0_kpc)?), None, None),
        MockHalo::PseudoIsothermal {
            rho0_msun_kpc3,
            core_radius_kpc,
        } => (
            Box::new(PseudoIsothermal::new(rho0_msun_kpc3, core_radius_kpc)?),
            None,
            None,
        ),
        MockHalo::Einasto {
            v200_kms,
            c200,
            alpha,
        } => {
            let (halo, virial) = Einasto::with_virial(v200_kms, c200, alpha, &cosmology)?;
            (Box::new(halo), Some(virial), None)
        }
        MockHalo::SidmCoreFirst {
            rho0_msun_kpc3,
            sigma0_kms,
            sigma_m_cm2_g,
        } => {
            let halo = sidm::core_first(&sidm_setup(sigma_m_cm2_g)?, rho0_msun_kpc3, sigma0_kms)?;
            let virial = halo.nfw().virial(&cosmology)?;
            let summary = halo.summary();
            (Box::new(halo), Some(virial), Some(summary))
        }
        MockHalo::SidmHaloFirst {
            v200_kms,
            c200,
            sigma_m_cm2_g,
            branch,
        } => {
            let nfw = Nfw::from_v200_c200(v200_kms, c200, &cosmology)?;
            let choice = if branch == 0 {
                Branch::LowestDensity
            } else {
                Branch::Index(branch)
            };
            let halo = sidm::halo_first(&sidm_setup(sigma_m_cm2_g)?, &nfw, choice)?;
            let virial = nfw.virial(&cosmology)?;
            let summary = halo.summary();
            (Box::new(halo), Some(virial), Some(summary))
        }
    };

    let v_halo_kms: Vec<f64> = radius_kpc.iter().map(|&r| halo.v_circ_kms(r)).collect();
    let v_true_kms: Vec<f64> = (0..n)
        .map(|i| {
            let v_b2 = table
                .baryon_velocities(i)
                .v_squared_kms2(spec.upsilon_disk, spec.upsilon_bulge);
            (v_halo_kms[i] * v_halo_kms[i] + v_b2).max(0.0).sqrt()
        })
        .collect();
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(spec.seed);
    for ((&v, err), obs) in v_true_kms
        .iter()
        .zip(&mut table.v_err_kms)
        .zip(&mut table.v_obs_kms)
    {
        let sigma = (spec.error_fraction * v).hypot(spec.error_floor_kms);
        let draw: f64 = StandardNormal.sample(&mut rng);
        *err = sigma;
        *obs = v + sigma * draw;
    }
    let v_max_kms = v_true_kms.iter().copied().fold(0.0, f64::max);
    let truth = MockTruth {
        spec: spec.clone(),
        virial,
        sidm: sidm_summary,
        radius_kpc,
        v_true_kms,
        v_halo_kms,
        v_max_kms,
    };
    Ok((table, truth))
}

#[cfg(test)]
mod tests {
    use super::*;

    pub(crate) fn dwarf_spec() -> MockSpec {
        MockSpec {
            name: "Kiln test dwarf".into(),
            seed: 11,
            halo: MockHalo::SidmHaloFirst {
                v200_kms: 50.0,
                c200: 14.0,
                sigma_m_cm2_g: 3.0,
                branch: 0,
            },
            age_gyr: 10.0,
            hubble_kms_mpc: 70.0,
            gas: Some(MockDisk {
                mass_msun: 4e8,
                scale_length_kpc: 2.0,
            }),
            stars: Some(MockDisk {
                mass_msun: 2e8,
                scale_length_kpc: 0.9,
            }),
            bulge: None,
            upsilon_disk: 0.5,
            upsilon_bulge: 0.7,
            r_min_kpc: 0.3,
            r_max_kpc: 6.0,
            n_points: 20,
            error_fraction: 0.05,
            error_floor_kms: 2.0,
            distance_mpc: 5.0,
            distance_err_mpc: 0.5,
            inclination_deg: 60.0,
            inclination_err_deg: 4.0,
            notes: String::new(),
            velocity_dependence: None,
        }
    }

    #[test]
    fn deterministic_for_a_seed_and_different_across_seeds() {
        let spec = dwarf_spec();
        let (a, _) = generate(&spec).expect("generates");
        let (b, _) = generate(&spec).expect("generates");
        assert_eq!(a, b);
        let (c, _) = generate(&MockSpec { seed: 12, ..spec }).expect("generates");
        assert_ne!(a.v_obs_kms, c.v_obs_kms);
    }

    #[test]
    fn noise_has_the_stated_spread() {
        // Over many points the normalised residuals (v_obs − v_true)/σ have mean 0 and
        // variance 1 (tolerances: 5 standard errors for 4000 draws).
        let spec = MockSpec {
            n_points: 4000,
            r_max_kpc: 8.0,
            ..dwarf_spec()
        };
        let (table, truth) = generate(&spec).expect("generates");
        let z: Vec<f64> = (0..table.len())
            .map(|i| (table.v_obs_kms[i] - truth.v_true_kms[i]) / table.v_err_kms[i])
            .collect();
        let mean = z.iter().sum::<f64>() / z.len() as f64;
        let variance = z.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (z.len() - 1) as f64;
        let se = 1.0 / (z.len() as f64).sqrt();
        assert!(mean.abs() < 5.0 * se, "mean {mean}");
        assert!(
            (variance - 1.0).abs() < 5.0 * 2f64.sqrt() * se,
            "variance {variance}"
        );
    }

    #[test]
    fn stellar_columns_are_written_for_unit_mass_to_light() {
        let spec = dwarf_spec();
        let (table, _) = generate(&spec).expect("generates");
        let stars = ExponentialDisk::new(2e8, 0.9).expect("valid");
        let r = table.radius_kpc[5];
        let v_star = stars.v_squared_kms2(r).sqrt();
        assert!((table.v_disk_kms[5] * spec.upsilon_disk.sqrt() - v_star).abs() < 1e-9);
    }

    #[test]
    fn velocity_dependent_cross_sections_set_the_core() {
        // The same halo with σ(v)/m = 3 (1 + v²/w²)⁻² cm²/g scatters less than with 3 cm²/g at
        // the core's ⟨v_rel⟩, so its core is smaller.
        let constant = generate(&MockSpec {
            halo: MockHalo::SidmHaloFirst {
                v200_kms: 50.0,
                c200: 14.0,
                sigma_m_cm2_g: 3.0,
                branch: 0,
            },
            ..dwarf_spec()
        })
        .expect("generates");
        let falling = generate(&MockSpec {
            halo: MockHalo::SidmHaloFirst {
                v200_kms: 50.0,
                c200: 14.0,
                sigma_m_cm2_g: 3.0,
                branch: 0,
            },
            velocity_dependence: Some(CrossSection::fall_off(3.0, 60.0).expect("valid")),
            ..dwarf_spec()
        })
        .expect("generates");
        let r1 = |t: &MockTruth| t.sidm.expect("SIDM").r1_kpc;
        assert!(r1(&falling.1) < r1(&constant.1));
        let json = serde_json::to_string(&falling.1.spec).expect("serialises");
        assert!(json.contains("FallOff"), "{json}");
    }

    #[test]
    fn bad_specs_are_refused() {
        for spec in [
            MockSpec {
                n_points: 1,
                ..dwarf_spec()
            },
            MockSpec {
                r_max_kpc: 0.1,
                ..dwarf_spec()
            },
            MockSpec {
                error_fraction: 0.0,
                error_floor_kms: 0.0,
                ..dwarf_spec()
            },
            MockSpec {
                distance_mpc: f64::NAN,
                ..dwarf_spec()
            },
        ] {
            assert!(matches!(generate(&spec), Err(MockError::Spec(_))));
        }
        let no_core = MockSpec {
            halo: MockHalo::SidmHaloFirst {
                v200_kms: 50.0,
                c200: 14.0,
                sigma_m_cm2_g: 500.0,
                branch: 0,
            },
            ..dwarf_spec()
        };
        assert!(matches!(generate(&no_core), Err(MockError::Model(_))));
    }

    #[test]
    fn einasto_mocks_carry_their_halo() {
        let spec = MockSpec {
            halo: MockHalo::Einasto {
                v200_kms: 70.0,
                c200: 10.0,
                alpha: 0.2,
            },
            ..dwarf_spec()
        };
        let (table, truth) = generate(&spec).expect("an Einasto mock");
        let cosmology = Cosmology::with_hubble(spec.hubble_kms_mpc).expect("cosmology");
        let halo = Einasto::from_v200_c200(70.0, 10.0, 0.2, &cosmology).expect("halo");
        for (r, v) in table.radius_kpc.iter().zip(&truth.v_halo_kms) {
            assert!((halo.v_circ_kms(*r) - v).abs() <= 1e-12 * v);
        }
        let virial = truth.virial.expect("virial quantities");
        assert!((virial.v200_kms - 70.0).abs() < 1e-12);
        assert!((virial.r200_kpc - 10.0 * halo.r_minus2_kpc).abs() < 1e-9);
    }
}
