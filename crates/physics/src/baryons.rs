//! Baryonic mass components: tabulated rotation-curve contributions and analytic profiles.
//!
//! A galaxy table gives, at each radius, the circular-velocity contributions of gas, stellar disk
//! and bulge (disk and bulge for a mass-to-light ratio Υ = 1). The baryonic contribution is
//! `V_b² = V_gas|V_gas| + Υ_disk V_disk|V_disk| + Υ_bulge V_bulge|V_bulge|`: a negative tabulated
//! value means a net outward pull at that radius and keeps its sign.
//!
//! For the Jeans equation the baryons enter as a *spherical* enclosed mass
//! `M_b(r) = r V_b²(r) / G` (common practice: the spherical approximation of a thin disk's
//! enclosed mass). Choices made here, which matter for the inner core:
//! - between tabulated radii, the signed mass `r V_b² / G` is interpolated linearly in r;
//! - inside the first radius it grows as r³ (a uniform-density centre);
//! - beyond the last radius it stays constant (all mass enclosed, Keplerian fall-off);
//! - where `V_b² < 0` the mass seen by the Jeans equation is clamped at zero
//!   ([`EnclosedMass::enclosed_mass_msun`]), while the signed value is kept for the model's
//!   circular velocity ([`BaryonTable::v_squared_kms2`]).

use std::cell::Cell;

use crate::PhysicsError;
use crate::error::{require_non_negative, require_positive};
use crate::special::freeman_bessel_factor;
use crate::units::G_KPC_KMS2_PER_MSUN;

/// A spherically symmetric enclosed mass, as the Jeans equation needs it.
pub trait EnclosedMass: Send + Sync {
    /// Mass inside radius `radius_kpc`, in Msun; never negative.
    fn enclosed_mass_msun(&self, radius_kpc: f64) -> f64;

    /// A radius below which the enclosed mass follows a single power law of r, in kpc.
    /// The Jeans solver starts its series solution well inside it.
    fn inner_scale_kpc(&self) -> f64;

    /// True when this component has no mass at all (lets the solver skip work).
    fn is_massless(&self) -> bool {
        false
    }

    /// The enclosed mass and its radial derivative dM/dr (Msun, Msun/kpc) at `radius_kpc`, for
    /// the sensitivities of the Jeans solution. The default takes a central difference with a
    /// relative step of 1e-6; components with a closed form override it.
    fn enclosed_mass_and_slope(&self, radius_kpc: f64) -> (f64, f64) {
        let step = 1e-6 * radius_kpc;
        let slope = (self.enclosed_mass_msun(radius_kpc + step)
            - self.enclosed_mass_msun(radius_kpc - step))
            / (2.0 * step);
        (self.enclosed_mass_msun(radius_kpc), slope)
    }

    /// [`EnclosedMass::enclosed_mass_msun`] for a caller that walks through radii in order (the
    /// Jeans integration): `cursor` carries a position between calls, so that a table steps from
    /// it instead of searching. The same value as without it; the default ignores it.
    fn enclosed_mass_walking(&self, radius_kpc: f64, _cursor: &Cell<usize>) -> f64 {
        self.enclosed_mass_msun(radius_kpc)
    }

    /// [`EnclosedMass::enclosed_mass_and_slope`] with a cursor, as
    /// [`EnclosedMass::enclosed_mass_walking`].
    fn enclosed_mass_and_slope_walking(
        &self,
        radius_kpc: f64,
        _cursor: &Cell<usize>,
    ) -> (f64, f64) {
        self.enclosed_mass_and_slope(radius_kpc)
    }
}

/// No baryons: the halo alone.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct NoBaryons;

impl EnclosedMass for NoBaryons {
    fn enclosed_mass_msun(&self, _radius_kpc: f64) -> f64 {
        0.0
    }
    fn inner_scale_kpc(&self) -> f64 {
        f64::INFINITY
    }
    fn is_massless(&self) -> bool {
        true
    }
    fn enclosed_mass_and_slope(&self, _radius_kpc: f64) -> (f64, f64) {
        (0.0, 0.0)
    }
}

/// A Hernquist (1990) sphere: ρ = M a / (2π r (r + a)³), M(r) = M r² / (r + a)².
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Hernquist {
    pub mass_msun: f64,
    pub scale_radius_kpc: f64,
}

impl Hernquist {
    /// A Hernquist sphere of total mass `mass_msun` and scale radius `scale_radius_kpc`.
    pub fn new(mass_msun: f64, scale_radius_kpc: f64) -> Result<Self, PhysicsError> {
        Ok(Self {
            mass_msun: require_non_negative("Hernquist mass [Msun]", mass_msun)?,
            scale_radius_kpc: require_positive("Hernquist scale radius [kpc]", scale_radius_kpc)?,
        })
    }

    /// Circular velocity V² = G M r / (r + a)², in (km/s)².
    #[must_use]
    pub fn v_squared_kms2(&self, radius_kpc: f64) -> f64 {
        let sum = radius_kpc + self.scale_radius_kpc;
        G_KPC_KMS2_PER_MSUN * self.mass_msun * radius_kpc / (sum * sum)
    }
}

impl EnclosedMass for Hernquist {
    fn enclosed_mass_msun(&self, radius_kpc: f64) -> f64 {
        let x = radius_kpc / (radius_kpc + self.scale_radius_kpc);
        self.mass_msun * x * x
    }
    /// dM/dr = 2 M r a / (r + a)³.
    fn enclosed_mass_and_slope(&self, radius_kpc: f64) -> (f64, f64) {
        let sum = radius_kpc + self.scale_radius_kpc;
        let x = radius_kpc / sum;
        (
            self.mass_msun * x * x,
            2.0 * self.mass_msun * x * self.scale_radius_kpc / (sum * sum),
        )
    }
    fn inner_scale_kpc(&self) -> f64 {
        self.scale_radius_kpc
    }
    fn is_massless(&self) -> bool {
        self.mass_msun == 0.0
    }
}

/// A razor-thin exponential disk (Freeman 1970): Σ(R) = Σ0 e^{−R/R_d}, Σ0 = M_d / (2π R_d²).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ExponentialDisk {
    pub mass_msun: f64,
    pub scale_length_kpc: f64,
}

impl ExponentialDisk {
    /// An exponential disk of total mass `mass_msun` and scale length `scale_length_kpc`.
    pub fn new(mass_msun: f64, scale_length_kpc: f64) -> Result<Self, PhysicsError> {
        Ok(Self {
            mass_msun: require_non_negative("disk mass [Msun]", mass_msun)?,
            scale_length_kpc: require_positive("disk scale length [kpc]", scale_length_kpc)?,
        })
    }

    /// Midplane circular velocity squared, V² = 4πGΣ0 R_d y² [I0(y)K0(y) − I1(y)K1(y)],
    /// y = R / (2 R_d), in (km/s)² (Freeman 1970, eq. 10).
    #[must_use]
    pub fn v_squared_kms2(&self, radius_kpc: f64) -> f64 {
        if radius_kpc <= 0.0 {
            return 0.0;
        }
        let y = radius_kpc / (2.0 * self.scale_length_kpc);
        // 4πGΣ0 R_d = 2 G M_d / R_d.
        2.0 * G_KPC_KMS2_PER_MSUN * self.mass_msun / self.scale_length_kpc
            * y
            * y
            * freeman_bessel_factor(y)
    }
}

impl EnclosedMass for ExponentialDisk {
    /// Spherical approximation M(r) = r V²(r) / G (common practice).
    fn enclosed_mass_msun(&self, radius_kpc: f64) -> f64 {
        (radius_kpc * self.v_squared_kms2(radius_kpc) / G_KPC_KMS2_PER_MSUN).max(0.0)
    }
    fn inner_scale_kpc(&self) -> f64 {
        0.1 * self.scale_length_kpc
    }
    fn is_massless(&self) -> bool {
        self.mass_msun == 0.0
    }
}

/// Baryonic rotation-curve contributions tabulated at a galaxy's radii, with mass-to-light ratios
/// applied. Build it with [`BaryonTable::new`].
#[derive(Debug, Clone, PartialEq)]
pub struct BaryonTable {
    radii_kpc: Vec<f64>,
    /// Signed r V_b² / G at each radius, Msun.
    signed_mass_msun: Vec<f64>,
}

/// One row of tabulated baryonic velocities, in km/s (at Υ = 1 for disk and bulge).
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct BaryonVelocities {
    pub gas_kms: f64,
    pub disk_kms: f64,
    pub bulge_kms: f64,
}

impl BaryonVelocities {
    /// V_b² = V_gas|V_gas| + Υ_disk V_disk|V_disk| + Υ_bulge V_bulge|V_bulge|, in (km/s)².
    #[must_use]
    pub fn v_squared_kms2(&self, upsilon_disk: f64, upsilon_bulge: f64) -> f64 {
        self.gas_kms * self.gas_kms.abs()
            + upsilon_disk * self.disk_kms * self.disk_kms.abs()
            + upsilon_bulge * self.bulge_kms * self.bulge_kms.abs()
    }
}

impl BaryonTable {
    /// Builds the table from strictly increasing positive radii and the velocity contributions
    /// at those radii, applying Υ_disk and Υ_bulge.
    pub fn new(
        radii_kpc: &[f64],
        velocities: &[BaryonVelocities],
        upsilon_disk: f64,
        upsilon_bulge: f64,
    ) -> Result<Self, PhysicsError> {
        require_non_negative("disk mass-to-light ratio", upsilon_disk)?;
        require_non_negative("bulge mass-to-light ratio", upsilon_bulge)?;
        if radii_kpc.len() != velocities.len() {
            return Err(PhysicsError::InvalidTable(format!(
                "{} radii but {} velocity rows",
                radii_kpc.len(),
                velocities.len()
            )));
        }
        if radii_kpc.is_empty() {
            return Err(PhysicsError::InvalidTable("no rows".into()));
        }
        let mut previous = 0.0;
        for &r in radii_kpc {
            require_positive("radius [kpc]", r)?;
            if r <= previous {
                return Err(PhysicsError::InvalidTable(format!(
                    "radii must increase strictly; {r} kpc follows {previous} kpc"
                )));
            }
            previous = r;
        }
        let mut signed_mass_msun = Vec::with_capacity(radii_kpc.len());
        for (&r, v) in radii_kpc.iter().zip(velocities) {
            let v2 = v.v_squared_kms2(upsilon_disk, upsilon_bulge);
            if !v2.is_finite() {
                return Err(PhysicsError::NonFinite {
                    what: "baryonic velocity [km/s]",
                    value: v2,
                });
            }
            signed_mass_msun.push(r * v2 / G_KPC_KMS2_PER_MSUN);
        }
        Ok(Self {
            radii_kpc: radii_kpc.to_vec(),
            signed_mass_msun,
        })
    }

    /// Builds the table directly from strictly increasing radii (kpc) and the signed enclosed
    /// masses r V_b²/G there (Msun), e.g. after rescaling a galaxy's distance.
    pub fn from_signed_mass(
        radii_kpc: Vec<f64>,
        signed_mass_msun: Vec<f64>,
    ) -> Result<Self, PhysicsError> {
        if radii_kpc.is_empty() || radii_kpc.len() != signed_mass_msun.len() {
            return Err(PhysicsError::InvalidTable(format!(
                "{} radii and {} masses",
                radii_kpc.len(),
                signed_mass_msun.len()
            )));
        }
        let mut previous = 0.0;
        for &r in &radii_kpc {
            require_positive("radius [kpc]", r)?;
            if r <= previous {
                return Err(PhysicsError::InvalidTable(format!(
                    "radii must increase strictly; {r} kpc follows {previous} kpc"
                )));
            }
            previous = r;
        }
        if let Some(&bad) = signed_mass_msun.iter().find(|m| !m.is_finite()) {
            return Err(PhysicsError::NonFinite {
                what: "baryonic enclosed mass [Msun]",
                value: bad,
            });
        }
        Ok(Self {
            radii_kpc,
            signed_mass_msun,
        })
    }

    /// The tabulated radii, kpc.
    #[must_use]
    pub fn radii_kpc(&self) -> &[f64] {
        &self.radii_kpc
    }

    /// Signed r V_b²/G at any radius, with the interpolation and extrapolation rules of the
    /// module documentation, in Msun.
    #[must_use]
    pub fn signed_mass_msun(&self, radius_kpc: f64) -> f64 {
        self.signed_mass_and_slope(radius_kpc, None).0
    }

    /// [`BaryonTable::signed_mass_msun`] and its derivative in radius (Msun/kpc). With a
    /// `cursor` (the last interval's upper index), the interval is found by stepping from it.
    fn signed_mass_and_slope(&self, radius_kpc: f64, cursor: Option<&Cell<usize>>) -> (f64, f64) {
        let radii = &self.radii_kpc;
        let masses = &self.signed_mass_msun;
        let n = radii.len();
        if radius_kpc <= radii[0] {
            let s = radius_kpc.max(0.0) / radii[0];
            return (masses[0] * s * s * s, 3.0 * masses[0] * s * s / radii[0]);
        }
        if radius_kpc >= radii[n - 1] {
            return (masses[n - 1], 0.0);
        }
        // The first radius ≥ r (1 ≤ upper ≤ n − 1 here).
        let upper = match cursor {
            Some(cursor) => {
                let mut upper = cursor.get().clamp(1, n - 1);
                while radii[upper] < radius_kpc {
                    upper += 1;
                }
                while radii[upper - 1] >= radius_kpc {
                    upper -= 1;
                }
                cursor.set(upper);
                upper
            }
            None => radii.partition_point(|&r| r < radius_kpc),
        };
        let lower = upper - 1;
        let width = radii[upper] - radii[lower];
        let w = (radius_kpc - radii[lower]) / width;
        let rise = masses[upper] - masses[lower];
        (masses[lower] + w * rise, rise / width)
    }

    /// Signed V_b² at any radius, (km/s)²: exactly the tabulated value at a tabulated radius.
    #[must_use]
    pub fn v_squared_kms2(&self, radius_kpc: f64) -> f64 {
        if radius_kpc <= 0.0 {
            return 0.0;
        }
        G_KPC_KMS2_PER_MSUN * self.signed_mass_msun(radius_kpc) / radius_kpc
    }
}

/// A galaxy table's baryonic rows — the one way a table becomes a baryonic mass model, used by
/// the fits, the live curve, `caldera curve --table` and the mock generator alike.
///
/// Each row's contribution to V² is signed (V|V|: a negative tabulated velocity is a net outward
/// pull); at mass-to-light ratios Υ and a distance factor f = D/D_table (radii ∝ D, V_b² ∝ D),
/// V_b²(row) = f (V_gas|V_gas| + Υ_disk V_disk|V_disk| + Υ_bulge V_bulge|V_bulge|). Rows at one
/// radius are averaged in V_b² (the enclosed mass is a function of radius); rows at r ≤ 0 carry
/// no rotation and are left out of the mass model (it grows as r³ inside the first radius).
#[derive(Debug, Clone, PartialEq)]
pub struct BaryonRows {
    /// Each row's velocities (disk and bulge at Υ = 1), km/s.
    rows: Vec<BaryonVelocities>,
    /// Rows grouped by radius: (radius in kpc, first row, count); only radii > 0.
    unique: Vec<(f64, usize, usize)>,
}

fn signed_square(v: f64) -> f64 {
    v * v.abs()
}

impl BaryonRows {
    /// The rows of a table sorted by radius (kpc), with gas, disk and optional bulge velocities
    /// (km/s, disk and bulge at Υ = 1).
    pub fn new(
        radius_kpc: &[f64],
        v_gas_kms: &[f64],
        v_disk_kms: &[f64],
        v_bulge_kms: Option<&[f64]>,
    ) -> Result<Self, PhysicsError> {
        let n = radius_kpc.len();
        if v_gas_kms.len() != n
            || v_disk_kms.len() != n
            || v_bulge_kms.is_some_and(|b| b.len() != n)
        {
            return Err(PhysicsError::InvalidTable(
                "the baryonic columns and the radii differ in length".into(),
            ));
        }
        let mut unique: Vec<(f64, usize, usize)> = Vec::new();
        for (row, &r) in radius_kpc.iter().enumerate() {
            match unique.last_mut() {
                Some(last) if last.0 >= r => last.2 += 1,
                _ => unique.push((r, row, 1)),
            }
        }
        if unique.first().is_some_and(|u| u.0 <= 0.0) {
            unique.remove(0);
        }
        if unique.is_empty() {
            return Err(PhysicsError::InvalidTable(
                "no row at a positive radius".into(),
            ));
        }
        Ok(Self {
            rows: (0..n)
                .map(|i| BaryonVelocities {
                    gas_kms: v_gas_kms[i],
                    disk_kms: v_disk_kms[i],
                    bulge_kms: v_bulge_kms.map_or(0.0, |b| b[i]),
                })
                .collect(),
            unique,
        })
    }

    /// Number of rows.
    #[must_use]
    pub fn len(&self) -> usize {
        self.rows.len()
    }

    /// True when there are no rows.
    #[must_use]
    pub fn is_empty(&self) -> bool {
        self.rows.is_empty()
    }

    /// Signed V_b² at each row, (km/s)², at Υ's and distance factor `distance_factor`.
    #[must_use]
    pub fn v2_rows_kms2(
        &self,
        upsilon_disk: f64,
        upsilon_bulge: f64,
        distance_factor: f64,
    ) -> Vec<f64> {
        self.rows
            .iter()
            .map(|row| distance_factor * row.v_squared_kms2(upsilon_disk, upsilon_bulge))
            .collect()
    }

    /// Signed √(f Υ V|V|) of one component at each row (gas: Υ = 1), km/s, for figures.
    #[must_use]
    pub fn component_kms(
        &self,
        component: BaryonComponent,
        upsilon: f64,
        distance_factor: f64,
    ) -> Vec<f64> {
        self.rows
            .iter()
            .map(|row| {
                let v = match component {
                    BaryonComponent::Gas => row.gas_kms,
                    BaryonComponent::Disk => row.disk_kms,
                    BaryonComponent::Bulge => row.bulge_kms,
                };
                let v2 = distance_factor * upsilon * signed_square(v);
                v2.signum() * v2.abs().sqrt()
            })
            .collect()
    }

    /// The mass model from per-row V_b² (as [`BaryonRows::v2_rows_kms2`] gives them) at radii
    /// scaled by `distance_factor`.
    pub fn mass_model(
        &self,
        distance_factor: f64,
        v2_rows_kms2: &[f64],
    ) -> Result<BaryonTable, PhysicsError> {
        let (radii, masses): (Vec<f64>, Vec<f64>) = self
            .unique
            .iter()
            .map(|&(r, first, count)| {
                let mean_v2 = v2_rows_kms2[first..first + count].iter().sum::<f64>() / count as f64;
                let r_scaled = r * distance_factor;
                (r_scaled, r_scaled * mean_v2 / G_KPC_KMS2_PER_MSUN)
            })
            .unzip();
        BaryonTable::from_signed_mass(radii, masses)
    }

    /// The mass model at Υ's and a distance factor.
    pub fn mass_model_at(
        &self,
        upsilon_disk: f64,
        upsilon_bulge: f64,
        distance_factor: f64,
    ) -> Result<BaryonTable, PhysicsError> {
        require_non_negative("disk mass-to-light ratio", upsilon_disk)?;
        require_non_negative("bulge mass-to-light ratio", upsilon_bulge)?;
        self.mass_model(
            distance_factor,
            &self.v2_rows_kms2(upsilon_disk, upsilon_bulge, distance_factor),
        )
    }
}

/// A baryonic component of a table.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum BaryonComponent {
    Gas,
    Disk,
    Bulge,
}

impl EnclosedMass for BaryonTable {
    fn enclosed_mass_msun(&self, radius_kpc: f64) -> f64 {
        self.signed_mass_msun(radius_kpc).max(0.0)
    }
    /// The slope of the interpolant itself (one-sided at a tabulated radius: the one of the
    /// interval below it), zero where the mass is clamped at 0.
    fn enclosed_mass_and_slope(&self, radius_kpc: f64) -> (f64, f64) {
        clamped_at_zero(self.signed_mass_and_slope(radius_kpc, None))
    }
    fn enclosed_mass_walking(&self, radius_kpc: f64, cursor: &Cell<usize>) -> f64 {
        self.signed_mass_and_slope(radius_kpc, Some(cursor))
            .0
            .max(0.0)
    }
    fn enclosed_mass_and_slope_walking(&self, radius_kpc: f64, cursor: &Cell<usize>) -> (f64, f64) {
        clamped_at_zero(self.signed_mass_and_slope(radius_kpc, Some(cursor)))
    }
    fn inner_scale_kpc(&self) -> f64 {
        self.radii_kpc[0]
    }
    fn is_massless(&self) -> bool {
        self.signed_mass_msun.iter().all(|&m| m <= 0.0)
    }
}

/// A signed mass and its slope, both zero where the mass is not positive.
fn clamped_at_zero((mass, slope): (f64, f64)) -> (f64, f64) {
    if mass > 0.0 {
        (mass, slope)
    } else {
        (0.0, 0.0)
    }
}

/// An enclosed mass multiplied by a constant factor (used for continuation in the halo-first
/// solve, where baryons are switched on gradually).
pub(crate) struct ScaledMass<'a> {
    pub inner: &'a dyn EnclosedMass,
    pub factor: f64,
}

impl EnclosedMass for ScaledMass<'_> {
    fn enclosed_mass_msun(&self, radius_kpc: f64) -> f64 {
        self.factor * self.inner.enclosed_mass_msun(radius_kpc)
    }
    fn enclosed_mass_and_slope(&self, radius_kpc: f64) -> (f64, f64) {
        let (mass, slope) = self.inner.enclosed_mass_and_slope(radius_kpc);
        (self.factor * mass, self.factor * slope)
    }
    fn enclosed_mass_walking(&self, radius_kpc: f64, cursor: &Cell<usize>) -> f64 {
        self.factor * self.inner.enclosed_mass_walking(radius_kpc, cursor)
    }
    fn enclosed_mass_and_slope_walking(&self, radius_kpc: f64, cursor: &Cell<usize>) -> (f64, f64) {
        let (mass, slope) = self
            .inner
            .enclosed_mass_and_slope_walking(radius_kpc, cursor);
        (self.factor * mass, self.factor * slope)
    }
    fn inner_scale_kpc(&self) -> f64 {
        self.inner.inner_scale_kpc()
    }
    fn is_massless(&self) -> bool {
        self.factor == 0.0 || self.inner.is_massless()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn walking_lookups_equal_searched_ones_and_slopes_match_differences() {
        // The cursor changes the cost, never the value: outward, inward and scattered radii, at
        // and between tabulated radii, inside the first and beyond the last. Slopes against
        // central differences away from the kinks.
        let table = BaryonTable::from_signed_mass(
            vec![0.3, 0.8, 1.5, 2.5, 4.0, 6.0, 9.0],
            vec![2e7, 2.2e8, -1e7, 1.9e9, 3.1e9, 3.9e9, 4.2e9],
        )
        .expect("valid");
        let outward: Vec<f64> = (0..400).map(|i| 0.025 * f64::from(i)).collect();
        let inward: Vec<f64> = outward.iter().rev().copied().collect();
        let scattered: Vec<f64> = (0..400)
            .map(|i| 10.0 * ((f64::from(i) * 0.618_034) % 1.0))
            .chain([0.3, 0.8, 9.0, 2.5])
            .collect();
        for radii in [&outward, &inward, &scattered] {
            let cursor = Cell::new(0);
            for &r in radii.iter() {
                assert_eq!(
                    table.enclosed_mass_walking(r, &cursor).to_bits(),
                    table.enclosed_mass_msun(r).to_bits(),
                    "r = {r}"
                );
                assert_eq!(
                    table.enclosed_mass_and_slope_walking(r, &cursor),
                    table.enclosed_mass_and_slope(r),
                    "r = {r}"
                );
            }
        }
        let bulge = Hernquist::new(3e9, 1.5).expect("valid");
        for r in [0.1, 0.55, 1.2, 3.3, 7.0, 12.0] {
            for mass in [&table as &dyn EnclosedMass, &bulge] {
                let step = 1e-6;
                let difference = (mass.enclosed_mass_msun(r + step)
                    - mass.enclosed_mass_msun(r - step))
                    / (2.0 * step);
                assert_relative_eq!(
                    mass.enclosed_mass_and_slope(r).1,
                    difference,
                    max_relative = 1e-6,
                    epsilon = 1e-3
                );
            }
        }
    }

    #[test]
    fn exponential_disk_matches_scipy_values() {
        // Reference: Freeman (1970) disk; values in units of sqrt(G M_d / R_d) from scipy
        // (tests/reference/check_values.md): V(1, 2, 3, 5, 10 R_d).
        let disk = ExponentialDisk::new(1.0 / G_KPC_KMS2_PER_MSUN, 1.0).expect("valid disk");
        let expected = [
            (1.0, 0.527218),
            (2.0, 0.621082),
            (3.0, 0.599160),
            (5.0, 0.489275),
            (10.0, 0.325329),
        ];
        for (r, v) in expected {
            // Tolerance 2e-5: the A&S Bessel approximations are good to about 2e-7 each, and
            // I0K0 − I1K1 cancels at large R.
            assert_relative_eq!(disk.v_squared_kms2(r).sqrt(), v, max_relative = 2e-5);
        }
    }

    #[test]
    fn exponential_disk_peak_matches_scipy() {
        // Reference: peak at R = 2.1501 R_d with V² = 0.38705 G M_d / R_d (scipy; tests/reference/check_values.md).
        let disk = ExponentialDisk::new(1.0 / G_KPC_KMS2_PER_MSUN, 1.0).expect("valid disk");
        let (mut best_r, mut best_v2) = (0.0, 0.0);
        for i in 1..=40000 {
            let r = f64::from(i) * 1e-4;
            let v2 = disk.v_squared_kms2(r);
            if v2 > best_v2 {
                best_v2 = v2;
                best_r = r;
            }
        }
        assert_relative_eq!(best_r, 2.1501, max_relative = 2e-4);
        assert_relative_eq!(best_v2, 0.38705, max_relative = 2e-5);
    }

    #[test]
    fn hernquist_peaks_at_its_scale_radius() {
        // Reference: Hernquist (1990): peak V² = GM/(4a) at r = a.
        let bulge = Hernquist::new(1e10, 2.0).expect("valid");
        let peak = bulge.v_squared_kms2(2.0);
        assert_relative_eq!(peak, G_KPC_KMS2_PER_MSUN * 1e10 / 8.0, max_relative = 1e-12);
        assert!(bulge.v_squared_kms2(1.9) < peak && bulge.v_squared_kms2(2.1) < peak);
    }

    #[test]
    fn table_keeps_sign_and_clamps_mass_for_jeans() {
        let rows = [
            BaryonVelocities {
                gas_kms: -5.0,
                disk_kms: 0.0,
                bulge_kms: 0.0,
            },
            BaryonVelocities {
                gas_kms: 10.0,
                disk_kms: 20.0,
                bulge_kms: 0.0,
            },
        ];
        let table = BaryonTable::new(&[1.0, 2.0], &rows, 0.5, 0.7).expect("valid");
        assert_relative_eq!(table.v_squared_kms2(1.0), -25.0, max_relative = 1e-12);
        assert_relative_eq!(
            table.v_squared_kms2(2.0),
            100.0 + 0.5 * 400.0,
            max_relative = 1e-12
        );
        assert!(table.enclosed_mass_msun(1.0).abs() < 1e-300);
        // Beyond the last radius the mass stays constant.
        assert_relative_eq!(
            table.enclosed_mass_msun(10.0),
            table.enclosed_mass_msun(2.0),
            max_relative = 1e-12
        );
        // Inside the first radius it grows as r³.
        let positive = BaryonTable::new(&[1.0], &rows[1..], 0.5, 0.7).expect("valid");
        assert_relative_eq!(
            positive.enclosed_mass_msun(0.5),
            positive.enclosed_mass_msun(1.0) / 8.0,
            max_relative = 1e-12
        );
    }

    #[test]
    fn table_rejects_unsorted_radii() {
        let rows = [BaryonVelocities::default(); 2];
        assert!(matches!(
            BaryonTable::new(&[2.0, 1.0], &rows, 0.5, 0.7),
            Err(PhysicsError::InvalidTable(_))
        ));
    }
}
