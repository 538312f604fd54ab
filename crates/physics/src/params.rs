//! What a model parameter *is*: one identifier per physical quantity a halo family or a galaxy's
//! nuisances are described by, with its machine key (files, JSON, chain columns), its label with
//! unit for people, and the coordinate a sampler naturally uses for it.
//!
//! Strings for parameters exist here and nowhere else in the engine: everything else asks a
//! [`ParamId`] for its key or label. Inference adds bounds and priors on top of these (the
//! `caldera-infer` crate's layouts); the app adds slider ranges from [`ParamId::control_range`].

use serde::{Deserialize, Serialize};

use crate::PhysicsError;

/// A model parameter, by the physical quantity it stands for.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize)]
pub enum ParamId {
    /// Central density ρ0 of a cored halo (SIDM core, Burkert, pseudo-isothermal), Msun/kpc³.
    Rho0,
    /// One-dimensional velocity dispersion σ0 of the SIDM isothermal core, km/s.
    Sigma0,
    /// Self-interaction cross-section per mass σ/m, cm²/g.
    SigmaM,
    /// Circular velocity at r200, km/s.
    V200,
    /// Concentration c200 = r200 / r₋₂.
    C200,
    /// Burkert core radius r0, kpc.
    R0,
    /// Pseudo-isothermal core radius r_c, kpc.
    Rc,
    /// Einasto shape parameter α (dimensionless).
    EinastoAlpha,
    /// Stellar-disk mass-to-light ratio Υ_disk (relative to the table's disk column).
    UpsilonDisk,
    /// Bulge mass-to-light ratio Υ_bulge (relative to the table's bulge column).
    UpsilonBulge,
    /// Distance, Mpc.
    Distance,
    /// Inclination, degrees.
    Inclination,
}

/// How a sampler explores a parameter: in the value itself or in its base-10 logarithm.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub enum Transform {
    Linear,
    Log10,
}

impl Transform {
    /// The sampled coordinate of a physical value.
    #[must_use]
    pub fn to_coordinate(self, value: f64) -> f64 {
        match self {
            Self::Linear => value,
            Self::Log10 => value.log10(),
        }
    }

    /// The physical value of a sampled coordinate.
    #[must_use]
    pub fn to_value(self, coordinate: f64) -> f64 {
        match self {
            Self::Linear => coordinate,
            Self::Log10 => 10f64.powf(coordinate),
        }
    }
}

impl ParamId {
    /// Every parameter, in a fixed order (the order of [`ParamValues`]' slots).
    pub const ALL: [Self; 12] = [
        Self::Rho0,
        Self::Sigma0,
        Self::SigmaM,
        Self::V200,
        Self::C200,
        Self::R0,
        Self::Rc,
        Self::EinastoAlpha,
        Self::UpsilonDisk,
        Self::UpsilonBulge,
        Self::Distance,
        Self::Inclination,
    ];

    /// The machine key of the physical value, with its unit (JSON keys, table columns).
    #[must_use]
    pub fn key(self) -> &'static str {
        match self {
            Self::Rho0 => "rho0_msun_kpc3",
            Self::Sigma0 => "sigma0_kms",
            Self::SigmaM => "sigma_m_cm2_g",
            Self::V200 => "v200_kms",
            Self::C200 => "c200",
            Self::R0 => "r0_kpc",
            Self::Rc => "rc_kpc",
            Self::EinastoAlpha => "einasto_alpha",
            Self::UpsilonDisk => "upsilon_disk",
            Self::UpsilonBulge => "upsilon_bulge",
            Self::Distance => "distance_mpc",
            Self::Inclination => "inclination_deg",
        }
    }

    /// The parameter whose [`ParamId::key`] is `key`.
    #[must_use]
    pub fn from_key(key: &str) -> Option<Self> {
        Self::ALL.into_iter().find(|p| p.key() == key)
    }

    /// The symbol for people, without unit (UI fonts lack few of these characters). The
    /// mass-to-light ratio is the upsilon with hooks, ϒ (U+03D2): the plain capital Υ (U+03A5) is
    /// drawn exactly as a Latin Y by the app's and the figures' font (DejaVu Sans).
    #[must_use]
    pub fn symbol(self) -> &'static str {
        match self {
            Self::Rho0 => "ρ0",
            Self::Sigma0 => "σ0",
            Self::SigmaM => "σ/m",
            Self::V200 => "V200",
            Self::C200 => "c200",
            Self::R0 => "r0",
            Self::Rc => "r_c",
            Self::EinastoAlpha => "α",
            Self::UpsilonDisk => "ϒ_disk",
            Self::UpsilonBulge => "ϒ_bulge",
            Self::Distance => "D",
            Self::Inclination => "i",
        }
    }

    /// The unit for people, empty when dimensionless.
    #[must_use]
    pub fn unit(self) -> &'static str {
        match self {
            Self::Rho0 => "Msun/kpc³",
            Self::Sigma0 | Self::V200 => "km/s",
            Self::SigmaM => "cm²/g",
            Self::R0 | Self::Rc => "kpc",
            Self::Distance => "Mpc",
            Self::Inclination => "deg",
            Self::C200 | Self::EinastoAlpha | Self::UpsilonDisk | Self::UpsilonBulge => "",
        }
    }

    /// What the parameter is, in words (tooltips, help).
    #[must_use]
    pub fn description(self) -> &'static str {
        match self {
            Self::Rho0 => "central density of the cored halo",
            Self::Sigma0 => "velocity dispersion of the SIDM isothermal core",
            Self::SigmaM => "self-interaction cross-section per mass",
            Self::V200 => "circular velocity at r200 (mean density 200 ρ_crit)",
            Self::C200 => "concentration r200 / r₋₂",
            Self::R0 => "Burkert core radius",
            Self::Rc => "pseudo-isothermal core radius",
            Self::EinastoAlpha => "Einasto shape parameter",
            Self::UpsilonDisk => {
                "stellar-disk mass-to-light ratio (scales the table's disk column)"
            }
            Self::UpsilonBulge => "bulge mass-to-light ratio (scales the table's bulge column)",
            Self::Distance => "distance (radii ∝ D, baryonic V² ∝ D)",
            Self::Inclination => "inclination (observed velocities ∝ 1/sin i)",
        }
    }

    /// "symbol [unit]" (or the symbol alone when dimensionless), e.g. "σ/m [cm²/g]".
    #[must_use]
    pub fn label(self) -> String {
        match self.unit() {
            "" => self.symbol().to_string(),
            unit => format!("{} [{unit}]", self.symbol()),
        }
    }

    /// The label of a sampled coordinate: "log σ/m [cm²/g]" for a log10 coordinate.
    #[must_use]
    pub fn coordinate_label(self, transform: Transform) -> String {
        match transform {
            Transform::Linear => self.label(),
            Transform::Log10 => format!("log {}", self.label()),
        }
    }

    /// The machine key of a sampled coordinate (a chain column): `log10_<key>` or `<key>`.
    #[must_use]
    pub fn column(self, transform: Transform) -> String {
        match transform {
            Transform::Linear => self.key().to_string(),
            Transform::Log10 => format!("log10_{}", self.key()),
        }
    }

    /// The parameter and transform of a chain column written by [`ParamId::column`].
    #[must_use]
    pub fn from_column(column: &str) -> Option<(Self, Transform)> {
        match column.strip_prefix("log10_") {
            Some(key) => Self::from_key(key).map(|p| (p, Transform::Log10)),
            None => Self::from_key(column).map(|p| (p, Transform::Linear)),
        }
    }

    /// A range a person would explore this parameter over by hand (sliders): (low, high, whether
    /// a logarithmic scale suits it). Common practice, not a prior.
    #[must_use]
    pub fn control_range(self) -> (f64, f64, bool) {
        match self {
            Self::Rho0 => (1e5, 1e11, true),
            Self::Sigma0 => (3.0, 500.0, true),
            Self::SigmaM => (0.01, 100.0, true),
            Self::V200 => (10.0, 400.0, true),
            Self::C200 => (1.0, 50.0, true),
            Self::R0 | Self::Rc => (0.05, 50.0, true),
            Self::EinastoAlpha => (0.05, 1.0, true),
            Self::UpsilonDisk | Self::UpsilonBulge => (0.05, 3.0, true),
            Self::Distance => (0.5, 100.0, true),
            Self::Inclination => (10.0, 90.0, false),
        }
    }

    fn slot(self) -> usize {
        self as usize
    }
}

/// Physical values of parameters by [`ParamId`] (unset ones are absent). Small and `Copy`, so
/// the hot path of a likelihood builds one per evaluation without allocating.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct ParamValues {
    values: [Option<f64>; ParamId::ALL.len()],
}

impl ParamValues {
    /// Values from (parameter, value) pairs.
    #[must_use]
    pub fn from_pairs(pairs: impl IntoIterator<Item = (ParamId, f64)>) -> Self {
        let mut values = Self::default();
        for (id, v) in pairs {
            values.set(id, v);
        }
        values
    }

    /// Sets `id` to `value`.
    pub fn set(&mut self, id: ParamId, value: f64) {
        self.values[id.slot()] = Some(value);
    }

    /// The value of `id`, if set.
    #[must_use]
    pub fn get(&self, id: ParamId) -> Option<f64> {
        self.values[id.slot()]
    }

    /// The value of `id`, or an error naming the missing parameter.
    pub fn require(&self, id: ParamId) -> Result<f64, PhysicsError> {
        self.get(id)
            .ok_or(PhysicsError::MissingParameter { what: id.key() })
    }

    /// The set values, in [`ParamId::ALL`] order.
    pub fn iter(&self) -> impl Iterator<Item = (ParamId, f64)> + '_ {
        ParamId::ALL
            .into_iter()
            .filter_map(|id| self.get(id).map(|v| (id, v)))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn keys_and_columns_round_trip() {
        for id in ParamId::ALL {
            assert_eq!(ParamId::from_key(id.key()), Some(id));
            for t in [Transform::Linear, Transform::Log10] {
                assert_eq!(ParamId::from_column(&id.column(t)), Some((id, t)));
            }
        }
        assert_eq!(ParamId::from_key("no_such_parameter"), None);
    }

    #[test]
    fn labels_carry_units() {
        assert_eq!(ParamId::SigmaM.label(), "σ/m [cm²/g]");
        assert_eq!(ParamId::C200.label(), "c200");
        assert_eq!(
            ParamId::Rho0.coordinate_label(Transform::Log10),
            "log ρ0 [Msun/kpc³]"
        );
    }

    #[test]
    fn transforms_invert_each_other() {
        for t in [Transform::Linear, Transform::Log10] {
            let x = 37.5;
            let back = t.to_value(t.to_coordinate(x));
            assert!((back - x).abs() < 1e-12 * x);
        }
    }

    #[test]
    fn values_hold_what_was_set() {
        let v = ParamValues::from_pairs([(ParamId::V200, 60.0), (ParamId::C200, 12.0)]);
        assert_eq!(v.get(ParamId::V200), Some(60.0));
        assert_eq!(v.get(ParamId::Rho0), None);
        assert!(v.require(ParamId::Rho0).is_err());
        assert_eq!(v.iter().count(), 2);
    }
}
