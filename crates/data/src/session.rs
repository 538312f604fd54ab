//! Session files: everything a user set up, saved as RON (Rusty Object Notation) with a `version`
//! field, written atomically, and never over an input table.
//!
//! Versioning: [`SESSION_VERSION`] is the format written now. Fields added later within a version
//! carry `#[serde(default)]`, so older files of the same version still load. A future format
//! change bumps the version and adds a `migrate_vN_to_vN+1` step in [`parse_session`]'s chain; a
//! file from a newer Caldera is refused with a message saying so.

use std::path::Path;

use caldera_physics::ParamId;
use serde::{Deserialize, Serialize};

use crate::catalogue::TABLE_EXTENSIONS;
use crate::error::DataError;
use crate::write::write_atomic;

/// The session format this build writes.
pub const SESSION_VERSION: u32 = 1;

/// Conventional extension of session files.
pub const SESSION_EXTENSION: &str = "ron";

/// Halo models a user can choose (the registry of halo families lives in the physics crate).
pub use caldera_physics::HaloModel;

/// What the user set for one galaxy (the controls' values).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct GalaxySettings {
    pub model: HaloModel,
    pub sigma_m_cm2_g: f64,
    pub v200_kms: f64,
    pub c200: f64,
    pub upsilon_disk: f64,
    pub upsilon_bulge: f64,
    pub age_gyr: f64,
    /// Central density and core radius of the cored empirical halos (Burkert, pseudo-isothermal).
    #[serde(default = "default_cored_rho0")]
    pub rho0_msun_kpc3: f64,
    #[serde(default = "default_cored_radius")]
    pub core_radius_kpc: f64,
    /// Overrides of the table's distance and inclination, when the user changed them.
    pub distance_mpc: Option<f64>,
    pub inclination_deg: Option<f64>,
    /// Shape α of the Einasto halo.
    #[serde(default = "default_einasto_alpha")]
    pub einasto_alpha: f64,
}

fn default_einasto_alpha() -> f64 {
    DEFAULT_EINASTO_ALPHA
}

/// The Einasto α a new galaxy starts with: ≈ 0.17, typical of simulated collisionless halos
/// (Gao et al. 2008; from memory).
pub const DEFAULT_EINASTO_ALPHA: f64 = 0.17;

impl GalaxySettings {
    /// The value set for `id`, if the settings hold one (σ0 is never set by hand; distance and
    /// inclination only when the user overrode the table's).
    #[must_use]
    pub fn value(&self, id: ParamId) -> Option<f64> {
        match id {
            ParamId::SigmaM => Some(self.sigma_m_cm2_g),
            ParamId::V200 => Some(self.v200_kms),
            ParamId::C200 => Some(self.c200),
            ParamId::Rho0 => Some(self.rho0_msun_kpc3),
            ParamId::R0 | ParamId::Rc => Some(self.core_radius_kpc),
            ParamId::EinastoAlpha => Some(self.einasto_alpha),
            ParamId::UpsilonDisk => Some(self.upsilon_disk),
            ParamId::UpsilonBulge => Some(self.upsilon_bulge),
            ParamId::Distance => self.distance_mpc,
            ParamId::Inclination => self.inclination_deg,
            ParamId::Sigma0 => None,
        }
    }

    /// Sets `id` to `value` (ignored for parameters the settings do not hold).
    pub fn set_value(&mut self, id: ParamId, value: f64) {
        match id {
            ParamId::SigmaM => self.sigma_m_cm2_g = value,
            ParamId::V200 => self.v200_kms = value,
            ParamId::C200 => self.c200 = value,
            ParamId::Rho0 => self.rho0_msun_kpc3 = value,
            ParamId::R0 | ParamId::Rc => self.core_radius_kpc = value,
            ParamId::EinastoAlpha => self.einasto_alpha = value,
            ParamId::UpsilonDisk => self.upsilon_disk = value,
            ParamId::UpsilonBulge => self.upsilon_bulge = value,
            ParamId::Distance => self.distance_mpc = Some(value),
            ParamId::Inclination => self.inclination_deg = Some(value),
            ParamId::Sigma0 => {}
        }
    }
}

fn default_cored_rho0() -> f64 {
    3e7
}

fn default_cored_radius() -> f64 {
    2.0
}

impl Default for GalaxySettings {
    fn default() -> Self {
        Self {
            model: HaloModel::Sidm,
            sigma_m_cm2_g: 1.0,
            v200_kms: 80.0,
            c200: 10.0,
            upsilon_disk: 0.5,
            upsilon_bulge: 0.7,
            age_gyr: caldera_physics::units::DEFAULT_HALO_AGE_GYR,
            rho0_msun_kpc3: default_cored_rho0(),
            core_radius_kpc: default_cored_radius(),
            distance_mpc: None,
            inclination_deg: None,
            einasto_alpha: DEFAULT_EINASTO_ALPHA,
        }
    }
}

/// A session file's content: any serde type written as a RON struct named `Session` with a
/// `version` field. The application's session type lives in a crate that knows everything a
/// session holds (priors, fit results); this module gives it versioning and safe storage.
pub trait SessionFile: Serialize + for<'de> Deserialize<'de> {
    /// The table or catalogue folder the session works on (never overwritten by a save).
    fn catalogue(&self) -> Option<&Path>;
}

fn malformed(path: &Path, message: String) -> DataError {
    DataError::Unusable {
        path: path.to_path_buf(),
        message,
    }
}

/// Reads a session file, checking its version.
pub fn load_session<T: SessionFile>(path: &Path) -> Result<T, DataError> {
    let text = std::fs::read_to_string(path).map_err(|source| DataError::Io {
        path: path.to_path_buf(),
        reason: source,
    })?;
    parse_session(&text, path)
}

/// Reads the `version` field alone; the rest of the file is interpreted by that version's rules.
fn probe_version(text: &str, path: &Path) -> Result<u32, DataError> {
    // Read the version alone first; the rest of the file is interpreted by that version's rules.
    #[derive(Deserialize)]
    #[serde(rename = "Session")]
    struct VersionProbe {
        #[serde(default)]
        version: u32,
    }
    let probe: VersionProbe = ron::from_str(text)
        .map_err(|e| malformed(path, format!("not a session file (RON): {e}")))?;
    if probe.version == 0 {
        return Err(malformed(
            path,
            "not a session file: no 'version' field".into(),
        ));
    }
    Ok(probe.version)
}

/// Parses session text; `path` names it in messages.
pub fn parse_session<T: SessionFile>(text: &str, path: &Path) -> Result<T, DataError> {
    let version = probe_version(text, path)?;
    match version {
        SESSION_VERSION => ron::from_str(text).map_err(|e| {
            malformed(
                path,
                format!("session file (version {version}) is damaged: {e}"),
            )
        }),
        v if v > SESSION_VERSION => Err(malformed(
            path,
            format!(
                "written by a newer Caldera (session version {v}; this build reads up to {SESSION_VERSION})"
            ),
        )),
        v => Err(malformed(
            path,
            format!("session version {v} is not one Caldera ever wrote"),
        )),
    }
}

/// Saves a session atomically. Refuses paths that look like tables or that hold a table of the
/// session's catalogue, and refuses to replace a file that is not a session.
pub fn save_session<T: SessionFile>(path: &Path, session: &T) -> Result<(), DataError> {
    let extension = path
        .extension()
        .and_then(|e| e.to_str())
        .map(str::to_ascii_lowercase)
        .unwrap_or_default();
    if TABLE_EXTENSIONS.contains(&extension.as_str()) {
        return Err(malformed(
            path,
            format!(
                "will not save a session over a table (.{extension}); use a .{SESSION_EXTENSION} file"
            ),
        ));
    }
    if let Some(catalogue) = session.catalogue()
        && same_file(path, catalogue)
    {
        return Err(malformed(
            path,
            "will not save a session over the catalogue it uses".into(),
        ));
    }
    if path.exists() {
        probe_version(&std::fs::read_to_string(path).unwrap_or_default(), path).map_err(|_| {
            malformed(
                path,
                "exists and is not a Caldera session; choose another name".into(),
            )
        })?;
    }
    let pretty = ron::ser::PrettyConfig::new().struct_names(true);
    let text = ron::ser::to_string_pretty(session, pretty)
        .map_err(|e| malformed(path, format!("cannot encode the session: {e}")))?;
    write_atomic(path, format!("{text}\n").as_bytes())
}

fn same_file(a: &Path, b: &Path) -> bool {
    match (a.canonicalize(), b.canonicalize()) {
        (Ok(x), Ok(y)) => x == y,
        _ => a == b,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::TableFormat;
    use crate::text::ColumnMapping;
    use caldera_physics::Cosmology;
    use std::collections::BTreeMap;
    use std::path::PathBuf;

    /// A minimal session type for testing the storage rules.
    #[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
    #[serde(rename = "Session")]
    struct Session {
        version: u32,
        catalogue: Option<PathBuf>,
        #[serde(default)]
        galaxies: BTreeMap<String, GalaxySettings>,
        #[serde(default)]
        mapping: ColumnMapping,
        #[serde(default)]
        format: Option<TableFormat>,
        #[serde(default)]
        cosmology: Cosmology,
    }

    impl SessionFile for Session {
        fn catalogue(&self) -> Option<&Path> {
            self.catalogue.as_deref()
        }
    }

    fn sample() -> Session {
        let mut galaxies = BTreeMap::new();
        galaxies.insert(
            "Kiln D03".to_string(),
            GalaxySettings {
                model: HaloModel::Burkert,
                sigma_m_cm2_g: 2.5,
                distance_mpc: Some(5.2),
                ..GalaxySettings::default()
            },
        );
        let mut mapping = ColumnMapping::new();
        mapping.insert(crate::ColumnRole::VelocityObserved, "vflat".into());
        Session {
            version: SESSION_VERSION,
            catalogue: Some(PathBuf::from("demo_galaxies")),
            galaxies,
            mapping,
            format: Some(TableFormat::Ecsv),
            cosmology: Cosmology::default(),
        }
    }

    fn temp(name: &str) -> PathBuf {
        let dir =
            std::env::temp_dir().join(format!("caldera-session-{}-{name}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).expect("temp dir");
        dir
    }

    #[test]
    fn round_trips_through_a_file() {
        let dir = temp("round");
        let path = dir.join("work.ron");
        let session = sample();
        save_session(&path, &session).expect("saves");
        assert_eq!(load_session::<Session>(&path).expect("loads"), session);
        // Saving again over a session is allowed.
        let other = Session {
            catalogue: None,
            ..sample()
        };
        save_session(&path, &other).expect("saves again");
        assert_eq!(load_session::<Session>(&path).expect("loads"), other);
        std::fs::remove_dir_all(&dir).ok();
    }

    #[test]
    fn never_writes_over_tables_or_foreign_files() {
        let dir = temp("guard");
        let table = dir.join("galaxy.ecsv");
        std::fs::write(&table, "# %ECSV 1.0\n").expect("write");
        assert!(save_session(&table, &sample()).is_err());
        assert_eq!(
            std::fs::read_to_string(&table).expect("reads"),
            "# %ECSV 1.0\n"
        );
        let foreign = dir.join("notes.ron");
        std::fs::write(&foreign, "my own notes").expect("write");
        assert!(save_session(&foreign, &sample()).is_err());
        assert_eq!(
            std::fs::read_to_string(&foreign).expect("reads"),
            "my own notes"
        );
        let catalogue_session = Session {
            catalogue: Some(dir.join("cat.ron")),
            ..sample()
        };
        std::fs::write(dir.join("cat.ron"), "").expect("write");
        assert!(save_session(&dir.join("cat.ron"), &catalogue_session).is_err());
        std::fs::remove_dir_all(&dir).ok();
    }

    #[test]
    fn versions_are_checked_and_old_fields_default() {
        let path = Path::new("s.ron");
        let newer =
            parse_session::<Session>("(version: 7, catalogue: None)", path).expect_err("refused");
        assert!(newer.to_string().contains("newer Caldera"), "{newer}");
        let unversioned = parse_session::<Session>("(catalogue: None)", path).expect_err("refused");
        assert!(
            unversioned.to_string().contains("no 'version'"),
            "{unversioned}"
        );
        // A minimal version-1 file (fields added later are absent) loads with defaults.
        let minimal = parse_session::<Session>("Session(version: 1, catalogue: Some(\"x\"))", path)
            .expect("loads");
        assert_eq!(minimal.catalogue, Some(PathBuf::from("x")));
        assert!(minimal.galaxies.is_empty());
        let damaged = parse_session::<Session>("Session(version: 1, catalogue: 3)", path)
            .expect_err("refused");
        assert!(damaged.to_string().contains("damaged"), "{damaged}");
    }
}
