//! `caldera mock`: write an invented galaxy's table and its truth file.

use std::path::{Path, PathBuf};
use std::process::ExitCode;

use anyhow::{Context, bail};
use caldera_data::mock::{MockBulge, MockDisk, MockHalo, MockSpec, generate};
use caldera_data::write_atomic;
use caldera_physics::units::DEFAULT_HALO_AGE_GYR;
use clap::{Args, ValueEnum};

use crate::Verbosity;

pub(crate) const EXAMPLES: &str = "\
Examples:
  caldera mock --name \"Kiln D01\" --halo sidm --v200 45 --c200 15 --cross-section 4 \\
      --gas-mass 3e8 --gas-scale 1.8 --disk-mass 1.5e8 --disk-scale 0.8 \\
      --r-max 6 --points 18 --seed 101 --out kiln_d01.ecsv
  caldera mock --name \"Kiln S01\" --halo nfw --v200 180 --c200 9 --disk-mass 5e10 \\
      --disk-scale 3 --bulge-mass 1e10 --bulge-scale 0.6 --r-max 30 --out s01.csv";

/// The kinds of halo the mock generator makes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum MockHaloKind {
    /// SIDM from the outer NFW halo (--v200, --c200, --cross-section).
    Sidm,
    /// SIDM from the core (--rho0, --sigma0, --cross-section).
    SidmCore,
    /// Collisionless NFW (--v200, --c200).
    Nfw,
    /// Burkert (--rho0, --r0).
    Burkert,
    /// Pseudo-isothermal (--rho0, --rc).
    PseudoIso,
    /// Einasto (--v200, --c200, --alpha).
    Einasto,
}

/// Arguments of `caldera mock`.
#[derive(Debug, Args)]
pub struct MockArgs {
    /// Galaxy name written into the table.
    #[arg(long)]
    pub name: String,
    /// Halo model.
    #[arg(long, value_enum)]
    pub halo: MockHaloKind,
    /// V200 of the (outer) NFW halo, km/s.
    #[arg(long, value_name = "KM/S")]
    pub v200: Option<f64>,
    /// Concentration c200 of the (outer) NFW halo.
    #[arg(long)]
    pub c200: Option<f64>,
    /// Central density, Msun/kpc³ (sidm-core, burkert, pseudo-iso).
    #[arg(long, value_name = "MSUN/KPC3")]
    pub rho0: Option<f64>,
    /// Core velocity dispersion σ0, km/s (sidm-core).
    #[arg(long, value_name = "KM/S")]
    pub sigma0: Option<f64>,
    /// Burkert core radius, kpc.
    #[arg(long, value_name = "KPC")]
    pub r0: Option<f64>,
    /// Pseudo-isothermal core radius, kpc.
    #[arg(long, value_name = "KPC")]
    pub rc: Option<f64>,
    /// Einasto shape α.
    #[arg(long)]
    pub alpha: Option<f64>,
    /// σ/m for SIDM halos, cm²/g.
    #[arg(long, value_name = "CM2/G")]
    pub cross_section: Option<f64>,
    /// Make σ/m velocity-dependent: σ(v)/m = σ0/m (1 + v²/w²)⁻² with σ0/m = --cross-section
    /// and this turnover velocity w, km/s.
    #[arg(long, value_name = "KM/S", conflicts_with = "velocity_model")]
    pub fall_off_w: Option<f64>,
    /// Make σ/m velocity-dependent with any cross-section model, given as for `caldera
    /// population --particle` (e.g. yukawa:m_chi=10,m_phi=5,alpha=6e-4); --cross-section is then
    /// not used, and the truth file records the model and the core's ⟨σv⟩/m and ⟨v_rel⟩.
    #[arg(long, value_name = "SPEC")]
    pub velocity_model: Option<String>,
    /// Halo-first solution (0 = lowest density).
    #[arg(long, default_value_t = 0)]
    pub branch: usize,
    /// Halo age, Gyr.
    #[arg(long, default_value_t = DEFAULT_HALO_AGE_GYR, value_name = "GYR")]
    pub age: f64,
    /// Hubble constant, km/s/Mpc.
    #[arg(long, default_value_t = 70.0, value_name = "KM/S/MPC")]
    pub h0: f64,
    /// Gas disk mass, Msun (exponential disk; 0 for none).
    #[arg(long, default_value_t = 0.0, value_name = "MSUN")]
    pub gas_mass: f64,
    /// Gas disk scale length, kpc.
    #[arg(long, default_value_t = 2.0, value_name = "KPC")]
    pub gas_scale: f64,
    /// Stellar disk mass, Msun (exponential disk; 0 for none).
    #[arg(long, default_value_t = 0.0, value_name = "MSUN")]
    pub disk_mass: f64,
    /// Stellar disk scale length, kpc.
    #[arg(long, default_value_t = 1.0, value_name = "KPC")]
    pub disk_scale: f64,
    /// Bulge mass, Msun (Hernquist; 0 for no bulge column).
    #[arg(long, default_value_t = 0.0, value_name = "MSUN")]
    pub bulge_mass: f64,
    /// Bulge scale radius, kpc.
    #[arg(long, default_value_t = 0.5, value_name = "KPC")]
    pub bulge_scale: f64,
    /// True stellar-disk mass-to-light ratio (the disk column is written for Υ = 1).
    #[arg(long, default_value_t = 0.5)]
    pub upsilon_disk: f64,
    /// True bulge mass-to-light ratio.
    #[arg(long, default_value_t = 0.7)]
    pub upsilon_bulge: f64,
    /// Innermost radius, kpc.
    #[arg(long, default_value_t = 0.3, value_name = "KPC")]
    pub r_min: f64,
    /// Outermost radius, kpc.
    #[arg(long, value_name = "KPC")]
    pub r_max: f64,
    /// Number of radii (evenly spaced).
    #[arg(long, default_value_t = 20)]
    pub points: usize,
    /// Fractional velocity error.
    #[arg(long, default_value_t = 0.05)]
    pub error_fraction: f64,
    /// Velocity error floor, km/s (added in quadrature).
    #[arg(long, default_value_t = 2.0, value_name = "KM/S")]
    pub error_floor: f64,
    /// Distance written into the table, Mpc.
    #[arg(long, default_value_t = 10.0, value_name = "MPC")]
    pub distance: f64,
    /// Distance error, Mpc.
    #[arg(long, default_value_t = 1.0, value_name = "MPC")]
    pub distance_err: f64,
    /// Inclination written into the table, degrees.
    #[arg(long, default_value_t = 60.0, value_name = "DEG")]
    pub inclination: f64,
    /// Inclination error, degrees.
    #[arg(long, default_value_t = 3.0, value_name = "DEG")]
    pub inclination_err: f64,
    /// Free-form notes written into the table.
    #[arg(long, default_value = "")]
    pub notes: String,
    /// Random seed for the noise.
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
    /// Output table (.ecsv or .csv).
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    /// Truth file (JSON); default: the table's name with .truth.json.
    #[arg(long, value_name = "FILE")]
    pub truth: Option<PathBuf>,
    /// Replace existing output files.
    #[arg(long)]
    pub force: bool,
}

fn need(value: Option<f64>, flag: &str, halo: &str) -> anyhow::Result<f64> {
    value.with_context(|| format!("--halo {halo} needs {flag}"))
}

impl MockArgs {
    /// The constant σ/m of an SIDM halo; NaN (written as null) when --velocity-model replaces it.
    fn constant_sigma_m(&self, halo: &str) -> anyhow::Result<f64> {
        if self.velocity_model.is_some() {
            return Ok(f64::NAN);
        }
        need(self.cross_section, "--cross-section", halo)
    }

    fn spec(&self) -> anyhow::Result<MockSpec> {
        let halo = match self.halo {
            MockHaloKind::Sidm => MockHalo::SidmHaloFirst {
                v200_kms: need(self.v200, "--v200", "sidm")?,
                c200: need(self.c200, "--c200", "sidm")?,
                sigma_m_cm2_g: self.constant_sigma_m("sidm")?,
                branch: self.branch,
            },
            MockHaloKind::SidmCore => MockHalo::SidmCoreFirst {
                rho0_msun_kpc3: need(self.rho0, "--rho0", "sidm-core")?,
                sigma0_kms: need(self.sigma0, "--sigma0", "sidm-core")?,
                sigma_m_cm2_g: self.constant_sigma_m("sidm-core")?,
            },
            MockHaloKind::Nfw => MockHalo::Nfw {
                v200_kms: need(self.v200, "--v200", "nfw")?,
                c200: need(self.c200, "--c200", "nfw")?,
            },
            MockHaloKind::Burkert => MockHalo::Burkert {
                rho0_msun_kpc3: need(self.rho0, "--rho0", "burkert")?,
                r0_kpc: need(self.r0, "--r0", "burkert")?,
            },
            MockHaloKind::PseudoIso => MockHalo::PseudoIsothermal {
                rho0_msun_kpc3: need(self.rho0, "--rho0", "pseudo-iso")?,
                core_radius_kpc: need(self.rc, "--rc", "pseudo-iso")?,
            },
            MockHaloKind::Einasto => MockHalo::Einasto {
                v200_kms: need(self.v200, "--v200", "einasto")?,
                c200: need(self.c200, "--c200", "einasto")?,
                alpha: need(self.alpha, "--alpha", "einasto")?,
            },
        };
        let disk = |mass: f64, scale: f64| {
            (mass > 0.0).then_some(MockDisk {
                mass_msun: mass,
                scale_length_kpc: scale,
            })
        };
        Ok(MockSpec {
            name: self.name.clone(),
            seed: self.seed,
            halo,
            age_gyr: self.age,
            hubble_kms_mpc: self.h0,
            gas: disk(self.gas_mass, self.gas_scale),
            stars: disk(self.disk_mass, self.disk_scale),
            bulge: (self.bulge_mass > 0.0).then_some(MockBulge {
                mass_msun: self.bulge_mass,
                scale_radius_kpc: self.bulge_scale,
            }),
            upsilon_disk: self.upsilon_disk,
            upsilon_bulge: self.upsilon_bulge,
            r_min_kpc: self.r_min,
            r_max_kpc: self.r_max,
            n_points: self.points,
            error_fraction: self.error_fraction,
            error_floor_kms: self.error_floor,
            distance_mpc: self.distance,
            distance_err_mpc: self.distance_err,
            inclination_deg: self.inclination,
            inclination_err_deg: self.inclination_err,
            notes: self.notes.clone(),
            velocity_dependence: match (self.fall_off_w, &self.velocity_model) {
                (Some(w), _) => Some(caldera_physics::CrossSection::fall_off(
                    need(self.cross_section, "--cross-section", "sidm")?,
                    w,
                )?),
                (None, Some(spec)) => Some(crate::population::parse_particle(spec)?),
                (None, None) => None,
            },
        })
    }
}

fn truth_path(out: &Path) -> PathBuf {
    let stem = out
        .file_stem()
        .map_or_else(|| "mock".into(), |s| s.to_string_lossy().into_owned());
    out.with_file_name(format!("{stem}.truth.json"))
}

/// Runs `caldera mock`.
pub(crate) fn run(args: &MockArgs, verbosity: Verbosity) -> anyhow::Result<ExitCode> {
    let spec = args.spec()?;
    let truth_file = args.truth.clone().unwrap_or_else(|| truth_path(&args.out));
    for path in [&args.out, &truth_file] {
        if path.exists() && !args.force {
            bail!("{} exists; pass --force to replace it", path.display());
        }
    }
    let (table, truth) =
        generate(&spec).with_context(|| format!("cannot make mock '{}'", spec.name))?;
    let output = table.to_output();
    let text = match args
        .out
        .extension()
        .and_then(|e| e.to_str())
        .map(str::to_ascii_lowercase)
        .as_deref()
    {
        Some("csv") => output.to_csv(&args.out)?,
        Some("ecsv") => output.to_ecsv(&args.out)?,
        _ => bail!("--out must end in .ecsv or .csv: {}", args.out.display()),
    };
    write_atomic(&args.out, text.as_bytes())?;
    let truth_text = serde_json::to_string_pretty(&truth)? + "\n";
    write_atomic(&truth_file, truth_text.as_bytes())?;
    if verbosity != Verbosity::Quiet {
        let sidm = truth
            .sidm
            .map(|s| format!(", r1 {:.2} kpc, <v_rel> {:.1} km/s", s.r1_kpc, s.v_rel_kms))
            .unwrap_or_default();
        eprintln!(
            "wrote {} ({} points, V_max {:.1} km/s{sidm}) and {}",
            args.out.display(),
            table.len(),
            truth.v_max_kms,
            truth_file.display()
        );
    }
    Ok(ExitCode::SUCCESS)
}
