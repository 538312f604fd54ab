//! Column roles, the header names that suggest them, and the units a header may carry.

use serde::{Deserialize, Serialize};

/// What a column holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
pub enum ColumnRole {
    Radius,
    VelocityObserved,
    VelocityError,
    VelocityGas,
    VelocityDisk,
    VelocityBulge,
}

impl ColumnRole {
    /// Every role, in table order.
    pub const ALL: [Self; 6] = [
        Self::Radius,
        Self::VelocityObserved,
        Self::VelocityError,
        Self::VelocityGas,
        Self::VelocityDisk,
        Self::VelocityBulge,
    ];

    /// Plain-words name of the role, for messages.
    #[must_use]
    pub fn describe(self) -> &'static str {
        match self {
            Self::Radius => "radius",
            Self::VelocityObserved => "observed circular velocity",
            Self::VelocityError => "velocity error",
            Self::VelocityGas => "gas velocity contribution",
            Self::VelocityDisk => "stellar-disk velocity contribution",
            Self::VelocityBulge => "bulge velocity contribution",
        }
    }

    /// The `caldera` flag that names this role's column (`--error-column NAME`).
    #[must_use]
    pub fn flag(self) -> &'static str {
        match self {
            Self::Radius => "--radius-column",
            Self::VelocityObserved => "--velocity-column",
            Self::VelocityError => "--error-column",
            Self::VelocityGas => "--gas-column",
            Self::VelocityDisk => "--disk-column",
            Self::VelocityBulge => "--bulge-column",
        }
    }

    /// Header names (after [`normalise`]) that mean this role.
    #[must_use]
    pub fn aliases(self) -> &'static [&'static str] {
        match self {
            Self::Radius => &["radius", "r", "rad", "rgal", "rad_kpc"],
            Self::VelocityObserved => &[
                "vobs",
                "v",
                "vrot",
                "vcirc",
                "vc",
                "velocity",
                "vobserved",
                "rotation",
            ],
            Self::VelocityError => &[
                "error",
                "err",
                "verr",
                "errv",
                "ev",
                "evobs",
                "vobserr",
                "errvobs",
                "sigmav",
                "dv",
                "uncertainty",
                "evrot",
            ],
            Self::VelocityGas => &["gas", "vgas"],
            Self::VelocityDisk => &["disk", "vdisk", "disc", "vdisc", "vstar", "vstars", "stars"],
            Self::VelocityBulge => &["bulge", "vbulge", "vbul", "bul"],
        }
    }

    /// True for roles a table must have.
    #[must_use]
    pub fn is_required(self) -> bool {
        !matches!(self, Self::VelocityBulge)
    }
}

/// Units a radius column may carry.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum LengthUnit {
    Kpc,
    Pc,
    Arcsec,
    Arcmin,
}

/// Units a velocity column may carry.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum VelocityUnit {
    KmPerS,
    MPerS,
}

/// A unit found in a header or an ECSV `unit` field.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum Unit {
    Length(LengthUnit),
    Velocity(VelocityUnit),
}

/// Parses a unit string such as `kpc`, `km / s`, `km/s`, `kms`, `m/s`, `arcsec`, `"`.
#[must_use]
pub fn parse_unit(text: &str) -> Option<Unit> {
    let compact: String = text
        .chars()
        .filter(|c| !c.is_whitespace())
        .collect::<String>()
        .to_ascii_lowercase();
    Some(match compact.as_str() {
        "kpc" => Unit::Length(LengthUnit::Kpc),
        "pc" => Unit::Length(LengthUnit::Pc),
        "arcsec" | "\"" | "asec" => Unit::Length(LengthUnit::Arcsec),
        "arcmin" | "'" | "amin" => Unit::Length(LengthUnit::Arcmin),
        "km/s" | "kms" | "kms-1" | "km.s-1" | "kms^-1" | "km/sec" => {
            Unit::Velocity(VelocityUnit::KmPerS)
        }
        "m/s" | "ms-1" | "m.s-1" | "ms^-1" => Unit::Velocity(VelocityUnit::MPerS),
        _ => return None,
    })
}

/// A header split into its normalised name and the unit it states, if any:
/// `"Radius [kpc]"` → (`"radius"`, kpc); `"v_obs_kms"` → (`"vobs"`, km/s); `"R"` → (`"r"`, none).
#[must_use]
pub fn split_header(header: &str) -> (String, Option<Unit>, Option<String>) {
    let trimmed = header.trim();
    // A unit in brackets or parentheses at the end.
    for (open, close) in [('[', ']'), ('(', ')')] {
        if let (Some(start), true) = (trimmed.rfind(open), trimmed.ends_with(close)) {
            let unit_text = &trimmed[start + 1..trimmed.len() - 1];
            return (
                normalise(&trimmed[..start]),
                parse_unit(unit_text),
                Some(unit_text.trim().to_string()),
            );
        }
    }
    // A unit as the last underscore-separated word: r_kpc, vobs_km/s.
    if let Some(position) = trimmed.rfind('_') {
        let (base, unit_text) = (&trimmed[..position], &trimmed[position + 1..]);
        if let Some(unit) = parse_unit(unit_text) {
            return (normalise(base), Some(unit), Some(unit_text.to_string()));
        }
    }
    (normalise(trimmed), None, None)
}

/// Lower case with everything but letters and digits removed.
#[must_use]
pub fn normalise(name: &str) -> String {
    name.chars()
        .filter(char::is_ascii_alphanumeric)
        .collect::<String>()
        .to_ascii_lowercase()
}

/// The role a header name suggests, if any.
#[must_use]
pub fn guess_role(normalised: &str) -> Option<ColumnRole> {
    ColumnRole::ALL
        .into_iter()
        .find(|role| role.aliases().contains(&normalised))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn headers_split_into_name_and_unit() {
        assert_eq!(split_header("Radius [kpc]").0.as_str(), "radius");
        assert_eq!(
            split_header("Radius [kpc]").1,
            Some(Unit::Length(LengthUnit::Kpc))
        );
        assert_eq!(split_header("v_obs_kms").0, "vobs");
        assert_eq!(
            split_header("v_obs_kms").1,
            Some(Unit::Velocity(VelocityUnit::KmPerS))
        );
        assert_eq!(
            split_header("V-Obs (m/s)").1,
            Some(Unit::Velocity(VelocityUnit::MPerS))
        );
        assert_eq!(split_header("R").0, "r");
        assert_eq!(split_header("R").1, None);
    }

    #[test]
    fn roles_are_found_case_and_punctuation_insensitively() {
        for (header, role) in [
            ("RAD", ColumnRole::Radius),
            ("V_obs", ColumnRole::VelocityObserved),
            ("e_Vobs", ColumnRole::VelocityError),
            ("V.gas", ColumnRole::VelocityGas),
            ("Vdisk", ColumnRole::VelocityDisk),
            ("v_bul", ColumnRole::VelocityBulge),
        ] {
            assert_eq!(guess_role(&split_header(header).0), Some(role), "{header}");
        }
    }
}
