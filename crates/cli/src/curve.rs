//! `caldera curve`: evaluate one halo model at chosen radii, optionally with a table's baryons.

use std::fmt::Write as _;
use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::{Context, bail};
use caldera_data::{GalaxyTable, read_table};
use caldera_infer::model::GalaxyModel;
use caldera_infer::priors::Priors;
use caldera_physics::{
    BaryonTable, Branch, Burkert, Cosmology, CrossSection, Einasto, EnclosedMass, HaloModel,
    HaloProfile, Nfw, NoBaryons, ParamId, ParamValues, PseudoIsothermal, SidmSetup, sidm,
    units::DEFAULT_HALO_AGE_GYR,
};
use clap::{Args, Subcommand};
use serde_json::{Map, Value, json};

use crate::Verbosity;
use crate::options::TableOptions;

pub(crate) const EXAMPLES: &str = "\
Examples:
  caldera curve sidm --rho0 1e8 --sigma0 40 --cross-section 3 --radii 0.5,1,2 --json
  caldera curve sidm --v200 60 --c200 12 --cross-section 2 --age 10 --radii 1,2,5
  caldera curve nfw --v200 60 --c200 12 --table galaxy.csv --upsilon-disk 0.5
  caldera curve burkert --rho0 3e7 --r0 2 --radii 1,2,4
  caldera curve pseudo-iso --rho0 5e7 --rc 1.5 --radii 1,2,4
  caldera curve einasto --v200 60 --c200 12 --alpha 0.17 --radii 1,2,4
  caldera curve nfw --v200 60 --c200 12 --table galaxy.csv --distance 7.9 --inclination 55";

/// Radii used when neither --radii nor --table is given, kpc.
const DEFAULT_RADII_KPC: [f64; 10] = [0.25, 0.5, 1.0, 2.0, 3.0, 5.0, 8.0, 12.0, 20.0, 30.0];

/// Arguments of `caldera curve`.
#[derive(Debug, Args)]
pub struct CurveArgs {
    #[command(subcommand)]
    pub model: CurveModel,
}

/// The halo model to evaluate.
#[derive(Debug, Subcommand)]
pub enum CurveModel {
    /// SIDM isothermal-Jeans halo: core-first from (--rho0, --sigma0) or halo-first from
    /// (--v200, --c200).
    Sidm(SidmArgs),
    /// Collisionless NFW halo from V200 and c200.
    Nfw(NfwArgs),
    /// Burkert cored halo from its central density and core radius.
    Burkert(BurkertArgs),
    /// Pseudo-isothermal cored halo from its central density and core radius.
    #[command(name = "pseudo-iso")]
    PseudoIso(PseudoIsoArgs),
    /// Einasto halo from V200, c200 = r200/r₋₂ and the shape α.
    Einasto(EinastoArgs),
}

/// Radii, baryons and output options shared by every model.
#[derive(Debug, Args)]
pub struct CommonArgs {
    /// Radii at which to evaluate, kpc, comma-separated (default: the table's radii, or a
    /// standard set from 0.25 to 30 kpc).
    #[arg(long, value_delimiter = ',', value_name = "KPC,...")]
    pub radii: Vec<f64>,
    /// A galaxy table whose baryons enter the model (and whose radii are used by default).
    #[arg(long, value_name = "FILE")]
    pub table: Option<PathBuf>,
    #[command(flatten)]
    pub table_options: TableOptions,
    /// Stellar-disk mass-to-light ratio applied to the table's disk column.
    #[arg(long, default_value_t = 0.5)]
    pub upsilon_disk: f64,
    /// Bulge mass-to-light ratio applied to the table's bulge column.
    #[arg(long, default_value_t = 0.7)]
    pub upsilon_bulge: f64,
    /// Distance, Mpc, instead of the table's: radii scale ∝ D and baryonic V² ∝ D.
    #[arg(long, value_name = "MPC", requires = "table")]
    pub distance: Option<f64>,
    /// Inclination, degrees, instead of the table's: observed velocities and errors scale by
    /// sin(i_table)/sin(i).
    #[arg(long, value_name = "DEG", requires = "table")]
    pub inclination: Option<f64>,
    /// Hubble constant for V200/c200, km/s/Mpc.
    #[arg(long, default_value_t = 70.0, value_name = "KM/S/MPC")]
    pub h0: f64,
    /// Print one JSON object instead of a text table.
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
pub struct SidmArgs {
    /// Central density ρ0, Msun/kpc³ (core-first, with --sigma0).
    #[arg(long, value_name = "MSUN/KPC3", requires = "sigma0", conflicts_with_all = ["v200", "c200"])]
    pub rho0: Option<f64>,
    /// Core velocity dispersion σ0, km/s (core-first, with --rho0).
    #[arg(long, value_name = "KM/S", requires = "rho0")]
    pub sigma0: Option<f64>,
    /// V200 of the outer NFW halo, km/s (halo-first, with --c200).
    #[arg(long, value_name = "KM/S", requires = "c200")]
    pub v200: Option<f64>,
    /// Concentration c200 of the outer NFW halo (halo-first, with --v200).
    #[arg(long, requires = "v200")]
    pub c200: Option<f64>,
    /// Self-interaction cross-section per mass σ/m, cm²/g.
    #[arg(long, value_name = "CM2/G")]
    pub cross_section: f64,
    /// Halo age over which each particle in the core has scattered about once, Gyr.
    #[arg(long, default_value_t = DEFAULT_HALO_AGE_GYR, value_name = "GYR")]
    pub age: f64,
    /// Halo-first solution to take, in order of increasing central density (0 = lowest
    /// density, the usual physical choice).
    #[arg(long, default_value_t = 0)]
    pub branch: usize,
    #[command(flatten)]
    pub common: CommonArgs,
}

#[derive(Debug, Args)]
pub struct NfwArgs {
    /// V200, km/s.
    #[arg(long, value_name = "KM/S")]
    pub v200: f64,
    /// Concentration c200.
    #[arg(long)]
    pub c200: f64,
    #[command(flatten)]
    pub common: CommonArgs,
}

#[derive(Debug, Args)]
pub struct BurkertArgs {
    /// Central density ρ0, Msun/kpc³.
    #[arg(long, value_name = "MSUN/KPC3")]
    pub rho0: f64,
    /// Core radius r0, kpc.
    #[arg(long, value_name = "KPC")]
    pub r0: f64,
    #[command(flatten)]
    pub common: CommonArgs,
}

#[derive(Debug, Args)]
pub struct EinastoArgs {
    /// V200, km/s.
    #[arg(long, value_name = "KM/S")]
    pub v200: f64,
    /// Concentration c200 = r200 / r₋₂.
    #[arg(long)]
    pub c200: f64,
    /// Shape parameter α.
    #[arg(long)]
    pub alpha: f64,
    #[command(flatten)]
    pub common: CommonArgs,
}

#[derive(Debug, Args)]
pub struct PseudoIsoArgs {
    /// Central density ρ0, Msun/kpc³.
    #[arg(long, value_name = "MSUN/KPC3")]
    pub rho0: f64,
    /// Core radius r_c, kpc.
    #[arg(long, value_name = "KPC")]
    pub rc: f64,
    #[command(flatten)]
    pub common: CommonArgs,
}

/// The table (if any), its posterior model and baryons, and the radii to evaluate.
struct Inputs {
    table: Option<(GalaxyTable, GalaxyModel)>,
    /// The nuisances set on the command line (Υ's, distance, inclination).
    nuisances: ParamValues,
    baryons: Option<BaryonTable>,
    radii_kpc: Vec<f64>,
    cosmology: Cosmology,
}

fn load_inputs(
    common: &CommonArgs,
    model: HaloModel,
    age_gyr: f64,
    verbosity: Verbosity,
) -> anyhow::Result<Inputs> {
    let cosmology = Cosmology::with_hubble(common.h0).context("invalid --h0")?;
    let table = match &common.table {
        None => None,
        Some(path) => {
            let table = read_table(path, &common.table_options.read_options()?)?;
            if verbosity != Verbosity::Quiet {
                for warning in &table.warnings {
                    eprintln!("warning: {warning}");
                }
            }
            Some(table)
        }
    };
    let mut nuisances = ParamValues::from_pairs([
        (ParamId::UpsilonDisk, common.upsilon_disk),
        (ParamId::UpsilonBulge, common.upsilon_bulge),
    ]);
    if let Some(d) = common.distance {
        nuisances.set(ParamId::Distance, d);
    }
    if let Some(i) = common.inclination {
        nuisances.set(ParamId::Inclination, i);
    }
    // With a table, the same galaxy model the fits use: its baryonic mass model at these
    // nuisances, and the χ² of the curve against the (rescaled) data.
    let table = match table {
        None => None,
        Some(t) => {
            if common.distance.is_some() && t.meta.distance_mpc.is_none_or(|d| d <= 0.0) {
                bail!("--distance needs a table that gives its distance (distance_mpc)");
            }
            if common.inclination.is_some() && t.meta.inclination_deg.is_none_or(|i| i <= 0.0) {
                bail!("--inclination needs a table that gives its inclination (inclination_deg)");
            }
            let model = GalaxyModel::new(&t, model, Priors::default(), cosmology, Some(age_gyr))
                .context("cannot set up the galaxy model for the table")?;
            Some((t, model))
        }
    };
    let baryons = table
        .as_ref()
        .map(|(_, m)| m.baryons_at_values(&nuisances))
        .transpose()
        .context("cannot build the baryonic mass model from the table")?;
    let radii_kpc = if !common.radii.is_empty() {
        common.radii.clone()
    } else if let Some((t, _)) = &table {
        // The table's radii at the chosen distance (r ∝ D).
        let factor = match (common.distance, t.meta.distance_mpc) {
            (Some(d), Some(table_d)) => d / table_d,
            _ => 1.0,
        };
        t.radius_kpc.iter().map(|r| r * factor).collect()
    } else {
        DEFAULT_RADII_KPC.to_vec()
    };
    if let Some(bad) = radii_kpc.iter().find(|r| !(r.is_finite() && **r > 0.0)) {
        bail!("--radii must be positive finite numbers in kpc; got {bad}");
    }
    Ok(Inputs {
        table,
        nuisances,
        baryons,
        radii_kpc,
        cosmology,
    })
}

/// Runs `caldera curve`.
pub(crate) fn run(args: &CurveArgs, verbosity: Verbosity) -> anyhow::Result<ExitCode> {
    let (common, model, age_gyr) = match &args.model {
        CurveModel::Sidm(a) => (&a.common, HaloModel::Sidm, a.age),
        CurveModel::Nfw(a) => (&a.common, HaloModel::Nfw, DEFAULT_HALO_AGE_GYR),
        CurveModel::Burkert(a) => (&a.common, HaloModel::Burkert, DEFAULT_HALO_AGE_GYR),
        CurveModel::PseudoIso(a) => (&a.common, HaloModel::PseudoIsothermal, DEFAULT_HALO_AGE_GYR),
        CurveModel::Einasto(a) => (&a.common, HaloModel::Einasto, DEFAULT_HALO_AGE_GYR),
    };
    let inputs = load_inputs(common, model, age_gyr, verbosity)?;
    let mut fields = Map::new();
    fields.insert("model".into(), json!(model.name()));
    // The halo's parameters by ParamId (SIDM: the core, solved halo-first when asked).
    let (halo, parameters): (Box<dyn HaloProfile>, ParamValues) = match &args.model {
        CurveModel::Sidm(a) => {
            let halo = build_sidm(a, &inputs, &mut fields)?;
            let parameters = ParamValues::from_pairs([
                (ParamId::Rho0, halo.rho0_msun_kpc3()),
                (ParamId::Sigma0, halo.sigma0_kms()),
                (ParamId::SigmaM, a.cross_section),
            ]);
            (Box::new(halo), parameters)
        }
        CurveModel::Nfw(a) => {
            let nfw = Nfw::from_v200_c200(a.v200, a.c200, &inputs.cosmology)
                .context("cannot build the NFW halo")?;
            let virial = nfw.virial(&inputs.cosmology)?;
            fields.insert("rho_s_msun_kpc3".into(), json!(nfw.rho_s_msun_kpc3));
            fields.insert("r_s_kpc".into(), json!(nfw.r_s_kpc));
            fields.insert("v200_kms".into(), json!(virial.v200_kms));
            fields.insert("c200".into(), json!(virial.c200));
            fields.insert("r200_kpc".into(), json!(virial.r200_kpc));
            fields.insert("m200_msun".into(), json!(virial.m200_msun));
            let parameters =
                ParamValues::from_pairs([(ParamId::V200, a.v200), (ParamId::C200, a.c200)]);
            (Box::new(nfw), parameters)
        }
        CurveModel::Burkert(a) => {
            fields.insert("rho0_msun_kpc3".into(), json!(a.rho0));
            fields.insert("r0_kpc".into(), json!(a.r0));
            let halo = Burkert::new(a.rho0, a.r0).context("cannot build the Burkert halo")?;
            let parameters =
                ParamValues::from_pairs([(ParamId::Rho0, a.rho0), (ParamId::R0, a.r0)]);
            (Box::new(halo), parameters)
        }
        CurveModel::PseudoIso(a) => {
            fields.insert("rho0_msun_kpc3".into(), json!(a.rho0));
            fields.insert("core_radius_kpc".into(), json!(a.rc));
            let halo = PseudoIsothermal::new(a.rho0, a.rc)
                .context("cannot build the pseudo-isothermal halo")?;
            let parameters =
                ParamValues::from_pairs([(ParamId::Rho0, a.rho0), (ParamId::Rc, a.rc)]);
            (Box::new(halo), parameters)
        }
        CurveModel::Einasto(a) => {
            let (halo, virial) = Einasto::with_virial(a.v200, a.c200, a.alpha, &inputs.cosmology)
                .context("cannot build the Einasto halo")?;
            for (key, value) in [
                ("v200_kms", virial.v200_kms),
                ("c200", virial.c200),
                ("alpha", a.alpha),
                ("rho_minus2_msun_kpc3", halo.rho_minus2_msun_kpc3),
                ("r_minus2_kpc", halo.r_minus2_kpc),
                ("r200_kpc", virial.r200_kpc),
                ("m200_msun", virial.m200_msun),
            ] {
                fields.insert(key.into(), json!(value));
            }
            let parameters = ParamValues::from_pairs([
                (ParamId::V200, a.v200),
                (ParamId::C200, a.c200),
                (ParamId::EinastoAlpha, a.alpha),
            ]);
            (Box::new(halo), parameters)
        }
    };
    let radii = &inputs.radii_kpc;
    let v_halo: Vec<f64> = radii.iter().map(|&r| halo.v_circ_kms(r)).collect();
    fields.insert("radii_kpc".into(), json!(radii));
    fields.insert("v_halo_kms".into(), json!(v_halo));
    let mut baryon_columns = None;
    if let (Some((table, galaxy)), Some(baryons)) = (&inputs.table, &inputs.baryons) {
        let mut values = inputs.nuisances;
        for (id, value) in parameters.iter() {
            values.set(id, value);
        }
        let (evaluation, _) = galaxy
            .evaluate_values(&values)
            .context("cannot evaluate the model against the table")?;
        fields.insert("chi2".into(), json!(evaluation.chi2));
        fields.insert("n_points".into(), json!(evaluation.radius_kpc.len()));
        if let Some(d) = common.distance.or(table.meta.distance_mpc) {
            fields.insert("distance_mpc".into(), json!(d));
        }
        if let Some(i) = common.inclination.or(table.meta.inclination_deg) {
            fields.insert("inclination_deg".into(), json!(i));
        }
        // Signed square roots: a negative V_b² (net outward pull) shows as a negative velocity.
        let v2: Vec<f64> = radii.iter().map(|&r| baryons.v_squared_kms2(r)).collect();
        let v_baryon: Vec<f64> = v2.iter().map(|v| v.signum() * v.abs().sqrt()).collect();
        let v_total: Vec<f64> = v2
            .iter()
            .zip(&v_halo)
            .map(|(b, h)| (h * h + b).max(0.0).sqrt())
            .collect();
        fields.insert("galaxy".into(), json!(table.meta.name));
        fields.insert("upsilon_disk".into(), json!(common.upsilon_disk));
        fields.insert("upsilon_bulge".into(), json!(common.upsilon_bulge));
        fields.insert("v_baryon_kms".into(), json!(v_baryon));
        fields.insert("v_total_kms".into(), json!(v_total));
        baryon_columns = Some((v_baryon, v_total));
    }
    if common.json {
        crate::output::print(&(serde_json::to_string_pretty(&Value::Object(fields))? + "\n"))?;
    } else {
        crate::output::print(&text_report(
            &fields,
            radii,
            &v_halo,
            baryon_columns.as_ref(),
        ))?;
    }
    Ok(ExitCode::SUCCESS)
}

fn build_sidm(
    a: &SidmArgs,
    inputs: &Inputs,
    fields: &mut Map<String, Value>,
) -> anyhow::Result<caldera_physics::SidmHalo> {
    let baryons: &dyn EnclosedMass = match &inputs.baryons {
        Some(b) => b,
        None => &NoBaryons,
    };
    let setup = SidmSetup {
        cross_section: CrossSection::constant(a.cross_section)
            .context("invalid --cross-section")?,
        age_gyr: a.age,
        baryons,
        cosmology: inputs.cosmology,
    };
    let halo = match (a.rho0, a.sigma0, a.v200, a.c200) {
        (Some(rho0), Some(sigma0), _, _) => {
            fields.insert("parameterisation".into(), json!("core-first"));
            sidm::core_first(&setup, rho0, sigma0).context("cannot build the SIDM halo")?
        }
        (_, _, Some(v200), Some(c200)) => {
            fields.insert("parameterisation".into(), json!("halo-first"));
            let nfw = Nfw::from_v200_c200(v200, c200, &inputs.cosmology)
                .context("cannot build the outer NFW halo")?;
            let branch = if a.branch == 0 {
                Branch::LowestDensity
            } else {
                Branch::Index(a.branch)
            };
            sidm::halo_first(&setup, &nfw, branch).context("cannot build the SIDM halo")?
        }
        _ => {
            bail!("give either --rho0 and --sigma0 (core-first) or --v200 and --c200 (halo-first)")
        }
    };
    let s = halo.summary();
    for (key, value) in [
        ("cross_section_cm2_g", a.cross_section),
        ("age_gyr", a.age),
        ("r1_kpc", s.r1_kpc),
        ("rho0_msun_kpc3", s.rho0_msun_kpc3),
        ("sigma0_kms", s.sigma0_kms),
        ("core_radius_kpc", s.core_radius_kpc),
        ("v_rel_kms", s.v_rel_kms),
        ("sigma_v_over_m_cm2_g_kms", s.sigma_v_over_m_cm2_g_kms),
        ("rho_s_msun_kpc3", s.rho_s_msun_kpc3),
        ("r_s_kpc", s.r_s_kpc),
        ("v200_kms", s.v200_kms),
        ("c200", s.c200),
        ("r200_kpc", s.r200_kpc),
        ("m200_msun", s.m200_msun),
    ] {
        fields.insert(key.into(), json!(value));
    }
    fields.insert("branch".into(), json!(s.branch));
    Ok(halo)
}

/// The human-readable report: parameters with units, then one row per radius.
fn text_report(
    fields: &Map<String, Value>,
    radii: &[f64],
    v_halo: &[f64],
    baryons: Option<&(Vec<f64>, Vec<f64>)>,
) -> String {
    const LABELS: [(&str, &str); 26] = [
        ("model", "model"),
        ("chi2", "chi2 against the table"),
        ("distance_mpc", "distance [Mpc]"),
        ("inclination_deg", "inclination [deg]"),
        ("parameterisation", "parameterisation"),
        ("galaxy", "galaxy"),
        ("cross_section_cm2_g", "sigma/m [cm2/g]"),
        ("age_gyr", "halo age [Gyr]"),
        ("branch", "solution (0 = lowest density)"),
        ("rho0_msun_kpc3", "rho0 [Msun/kpc3]"),
        ("sigma0_kms", "sigma0 [km/s]"),
        ("r1_kpc", "r1 [kpc]"),
        ("core_radius_kpc", "core radius [kpc]"),
        ("r0_kpc", "core radius r0 [kpc]"),
        ("v_rel_kms", "<v_rel> [km/s]"),
        ("sigma_v_over_m_cm2_g_kms", "<sigma v>/m [cm2/g km/s]"),
        ("rho_s_msun_kpc3", "rho_s [Msun/kpc3]"),
        ("r_s_kpc", "r_s [kpc]"),
        ("v200_kms", "V200 [km/s]"),
        ("c200", "c200"),
        ("m200_msun", "M200 [Msun]"),
        ("alpha", "Einasto alpha"),
        ("rho_minus2_msun_kpc3", "rho_-2 [Msun/kpc3]"),
        ("r_minus2_kpc", "r_-2 [kpc]"),
        ("r200_kpc", "r200 [kpc]"),
        ("upsilon_disk", "Upsilon disk, bulge"),
    ];
    let mut out = String::new();
    for (key, label) in LABELS {
        let Some(value) = fields.get(key) else {
            continue;
        };
        let shown = match (key, value) {
            ("upsilon_disk", v) => format!(
                "{v}, {}",
                fields.get("upsilon_bulge").unwrap_or(&Value::Null)
            ),
            (_, Value::Number(n)) if n.is_u64() => n.to_string(),
            (_, Value::Number(n)) => n.as_f64().map_or_else(|| n.to_string(), format_number),
            (_, Value::String(s)) => s.clone(),
            (_, Value::Null) => "-".into(),
            (_, v) => v.to_string(),
        };
        let _ = writeln!(out, "{label:>32}: {shown}");
    }
    let _ = write!(out, "\n{:>10} {:>14}", "r [kpc]", "V_halo [km/s]");
    if baryons.is_some() {
        let _ = write!(out, " {:>14} {:>15}", "V_bary [km/s]", "V_total [km/s]");
    }
    out.push('\n');
    for (i, r) in radii.iter().enumerate() {
        let _ = write!(out, "{r:>10.4} {:>14.4}", v_halo[i]);
        if let Some((v_b, v_t)) = baryons {
            let _ = write!(out, " {:>14.4} {:>15.4}", v_b[i], v_t[i]);
        }
        out.push('\n');
    }
    out
}

fn format_number(value: f64) -> String {
    if value != 0.0 && (value.abs() >= 1e5 || value.abs() < 1e-2) {
        format!("{value:.6e}")
    } else {
        format!("{value:.6}")
    }
}
