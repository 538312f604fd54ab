//! Halo density profiles behind one small trait: NFW, Burkert and pseudo-isothermal here; the
//! SIDM isothermal-Jeans halo in [`crate::sidm`].

use std::f64::consts::PI;

use crate::PhysicsError;
use crate::cosmology::{Cosmology, VIRIAL_OVERDENSITY};
use crate::error::require_positive;
use crate::roots::brent;
use crate::special::{ln_gamma, regularized_lower_gamma};
use crate::units::G_KPC_KMS2_PER_MSUN;

/// A spherical dark-matter halo.
pub trait HaloProfile {
    /// Density at `radius_kpc`, Msun/kpc³.
    fn density_msun_kpc3(&self, radius_kpc: f64) -> f64;

    /// Dark-matter mass inside `radius_kpc`, Msun.
    fn enclosed_mass_msun(&self, radius_kpc: f64) -> f64;

    /// Circular velocity sqrt(G M(<r) / r), km/s (zero at r ≤ 0).
    fn v_circ_kms(&self, radius_kpc: f64) -> f64 {
        if radius_kpc <= 0.0 {
            return 0.0;
        }
        (G_KPC_KMS2_PER_MSUN * self.enclosed_mass_msun(radius_kpc) / radius_kpc)
            .max(0.0)
            .sqrt()
    }
}

/// f(x) = ln(1 + x) − x/(1 + x), the NFW mass function, accurate at small x.
#[must_use]
pub fn nfw_mass_function(x: f64) -> f64 {
    if x < 1e-3 {
        // Series: x²/2 − 2x³/3 + 3x⁴/4 − 4x⁵/5 (cancellation-free).
        x * x * (0.5 + x * (-2.0 / 3.0 + x * (0.75 - 0.8 * x)))
    } else {
        x.ln_1p() - x / (1.0 + x)
    }
}

/// An NFW halo (Navarro, Frenk & White 1996, 1997): ρ = ρ_s / [x (1 + x)²], x = r / r_s,
/// M(r) = 4π ρ_s r_s³ f(x).
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Nfw {
    pub rho_s_msun_kpc3: f64,
    pub r_s_kpc: f64,
}

/// The virial description of an NFW halo under a [`Cosmology`].
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct VirialQuantities {
    pub v200_kms: f64,
    pub c200: f64,
    pub r200_kpc: f64,
    pub m200_msun: f64,
}

impl Nfw {
    /// An NFW halo from its scale density (Msun/kpc³) and scale radius (kpc).
    pub fn from_rho_s_r_s(rho_s_msun_kpc3: f64, r_s_kpc: f64) -> Result<Self, PhysicsError> {
        Ok(Self {
            rho_s_msun_kpc3: require_positive("NFW scale density [Msun/kpc3]", rho_s_msun_kpc3)?,
            r_s_kpc: require_positive("NFW scale radius [kpc]", r_s_kpc)?,
        })
    }

    /// An NFW halo from V200 (km/s) and concentration c200: r200 = V200/(10 H0), r_s = r200/c,
    /// ρ_s = (200/3) ρ_crit c³ / f(c).
    pub fn from_v200_c200(
        v200_kms: f64,
        c200: f64,
        cosmology: &Cosmology,
    ) -> Result<Self, PhysicsError> {
        require_positive("V200 [km/s]", v200_kms)?;
        require_positive("c200", c200)?;
        let r200 = cosmology.r200_kpc_from_v200(v200_kms);
        let rho_s =
            VIRIAL_OVERDENSITY / 3.0 * cosmology.critical_density_msun_kpc3() * c200.powi(3)
                / nfw_mass_function(c200);
        Self::from_rho_s_r_s(rho_s, r200 / c200)
    }

    /// An NFW halo from M200 (Msun) and concentration c200.
    pub fn from_m200_c200(
        m200_msun: f64,
        c200: f64,
        cosmology: &Cosmology,
    ) -> Result<Self, PhysicsError> {
        require_positive("M200 [Msun]", m200_msun)?;
        let r200 = cosmology.r200_kpc_from_m200(m200_msun);
        Self::from_v200_c200(cosmology.v200_kms_from_r200(r200), c200, cosmology)
    }

    /// V200, c200, r200 and M200 of this halo: solves (200/3) ρ_crit c³ / f(c) = ρ_s for c.
    pub fn virial(&self, cosmology: &Cosmology) -> Result<VirialQuantities, PhysicsError> {
        let target = self.rho_s_msun_kpc3
            / (VIRIAL_OVERDENSITY / 3.0 * cosmology.critical_density_msun_kpc3());
        let residual = |ln_c: f64| {
            let c = ln_c.exp();
            (c.powi(3) / nfw_mass_function(c)).ln() - target.ln()
        };
        // c³/f(c) rises monotonically from 2c (c → 0) to c³/ln c: a bracket in ln c always holds
        // for the densities of real halos.
        let ln_c = brent(residual, -30.0, 30.0, 1e-14, "c200 from scale density")?;
        let c200 = ln_c.exp();
        let r200_kpc = c200 * self.r_s_kpc;
        let v200_kms = cosmology.v200_kms_from_r200(r200_kpc);
        Ok(VirialQuantities {
            v200_kms,
            c200,
            r200_kpc,
            m200_msun: v200_kms * v200_kms * r200_kpc / G_KPC_KMS2_PER_MSUN,
        })
    }

    /// Radius where the density equals `density_msun_kpc3`, kpc: solves x (1+x)² = ρ_s / ρ.
    #[must_use]
    pub fn radius_at_density_kpc(&self, density_msun_kpc3: f64) -> f64 {
        let target = self.rho_s_msun_kpc3 / density_msun_kpc3;
        // g(x) = x (1+x)² is increasing; Newton from a guess that follows both limits.
        let mut x = if target < 1.0 { target } else { target.cbrt() };
        for _ in 0..100 {
            let g = x * (1.0 + x) * (1.0 + x);
            let dg = (1.0 + x) * (1.0 + 3.0 * x);
            let step = (g - target) / dg;
            let next = (x - step).max(0.1 * x);
            if (next - x).abs() <= 1e-15 * x {
                x = next;
                break;
            }
            x = next;
        }
        x * self.r_s_kpc
    }
}

impl HaloProfile for Nfw {
    fn density_msun_kpc3(&self, radius_kpc: f64) -> f64 {
        let x = radius_kpc / self.r_s_kpc;
        self.rho_s_msun_kpc3 / (x * (1.0 + x) * (1.0 + x))
    }
    fn enclosed_mass_msun(&self, radius_kpc: f64) -> f64 {
        4.0 * PI
            * self.rho_s_msun_kpc3
            * self.r_s_kpc.powi(3)
            * nfw_mass_function(radius_kpc.max(0.0) / self.r_s_kpc)
    }
}

/// The virial radius r200 of any halo: where its mean enclosed density is 200 ρ_crit, kpc.
pub fn virial_radius_kpc(
    halo: &dyn HaloProfile,
    cosmology: &Cosmology,
) -> Result<f64, PhysicsError> {
    let target = VIRIAL_OVERDENSITY * cosmology.critical_density_msun_kpc3();
    // ln(mean density / target) falls with radius for every profile here; bracket in ln r.
    let excess = |ln_r: f64| {
        let r = ln_r.exp();
        (3.0 * halo.enclosed_mass_msun(r) / (4.0 * PI * r * r * r)).ln() - target.ln()
    };
    brent(
        excess,
        (1e-4f64).ln(),
        (1e5f64).ln(),
        1e-12,
        "virial radius",
    )
    .map(f64::exp)
}

/// V200, c200 (from a given scale radius r_−2 where the log-slope is −2), r200 and M200 of any
/// halo, by [`virial_radius_kpc`].
pub fn virial_quantities(
    halo: &dyn HaloProfile,
    r_minus2_kpc: f64,
    cosmology: &Cosmology,
) -> Result<VirialQuantities, PhysicsError> {
    let r200_kpc = virial_radius_kpc(halo, cosmology)?;
    let v200_kms = cosmology.v200_kms_from_r200(r200_kpc);
    Ok(VirialQuantities {
        v200_kms,
        c200: r200_kpc / r_minus2_kpc,
        r200_kpc,
        m200_msun: v200_kms * v200_kms * r200_kpc / G_KPC_KMS2_PER_MSUN,
    })
}

/// The Burkert (1995) cored profile: ρ = ρ0 r0³ / [(r + r0)(r² + r0²)].
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Burkert {
    pub rho0_msun_kpc3: f64,
    pub r0_kpc: f64,
}

impl Burkert {
    /// A Burkert halo from its central density (Msun/kpc³) and core radius (kpc).
    pub fn new(rho0_msun_kpc3: f64, r0_kpc: f64) -> Result<Self, PhysicsError> {
        Ok(Self {
            rho0_msun_kpc3: require_positive(
                "Burkert central density [Msun/kpc3]",
                rho0_msun_kpc3,
            )?,
            r0_kpc: require_positive("Burkert core radius [kpc]", r0_kpc)?,
        })
    }
}

impl Burkert {
    /// r_−2 / r0 for the Burkert profile: the root of x/(1+x) + 2x²/(1+x²) = 2 (where
    /// d ln ρ / d ln r = −2), ≈ 1.5214; used to define its concentration r200 / r_−2.
    pub fn r_minus2_over_r0() -> f64 {
        static VALUE: std::sync::OnceLock<f64> = std::sync::OnceLock::new();
        *VALUE.get_or_init(|| {
            brent(
                |x| x / (1.0 + x) + 2.0 * x * x / (1.0 + x * x) - 2.0,
                1.0,
                3.0,
                1e-14,
                "Burkert r_-2",
            )
            .unwrap_or(1.5214)
        })
    }
}

impl HaloProfile for Burkert {
    fn density_msun_kpc3(&self, radius_kpc: f64) -> f64 {
        let r0 = self.r0_kpc;
        self.rho0_msun_kpc3 * r0.powi(3) / ((radius_kpc + r0) * (radius_kpc * radius_kpc + r0 * r0))
    }
    /// M(r) = π ρ0 r0³ [ln(1 + x²) + 2 ln(1 + x) − 2 arctan x], x = r / r0.
    fn enclosed_mass_msun(&self, radius_kpc: f64) -> f64 {
        let x = radius_kpc.max(0.0) / self.r0_kpc;
        let bracket = if x < 1e-3 {
            // Series of the bracket: (4/3) x³ − x⁴ + ... avoids cancellation.
            x.powi(3) * (4.0 / 3.0 - x)
        } else {
            (x * x).ln_1p() + 2.0 * x.ln_1p() - 2.0 * x.atan()
        };
        PI * self.rho0_msun_kpc3 * self.r0_kpc.powi(3) * bracket
    }
}

/// The pseudo-isothermal sphere: ρ = ρ0 / (1 + (r/r_c)²),
/// V² = 4πGρ0 r_c² [1 − (r_c/r) arctan(r/r_c)].
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct PseudoIsothermal {
    pub rho0_msun_kpc3: f64,
    pub core_radius_kpc: f64,
}

impl PseudoIsothermal {
    /// A pseudo-isothermal halo from its central density (Msun/kpc³) and core radius (kpc).
    pub fn new(rho0_msun_kpc3: f64, core_radius_kpc: f64) -> Result<Self, PhysicsError> {
        Ok(Self {
            rho0_msun_kpc3: require_positive(
                "pseudo-isothermal central density [Msun/kpc3]",
                rho0_msun_kpc3,
            )?,
            core_radius_kpc: require_positive(
                "pseudo-isothermal core radius [kpc]",
                core_radius_kpc,
            )?,
        })
    }
}

impl HaloProfile for PseudoIsothermal {
    fn density_msun_kpc3(&self, radius_kpc: f64) -> f64 {
        let x = radius_kpc / self.core_radius_kpc;
        self.rho0_msun_kpc3 / (1.0 + x * x)
    }
    /// M(r) = 4π ρ0 r_c³ (x − arctan x), x = r / r_c.
    fn enclosed_mass_msun(&self, radius_kpc: f64) -> f64 {
        let x = radius_kpc.max(0.0) / self.core_radius_kpc;
        let bracket = if x < 1e-3 {
            x.powi(3) / 3.0 * (1.0 - 0.6 * x * x)
        } else {
            x - x.atan()
        };
        4.0 * PI * self.rho0_msun_kpc3 * self.core_radius_kpc.powi(3) * bracket
    }
}

/// The Einasto (1965) profile: ρ = ρ₋₂ exp{−(2/α)[(r/r₋₂)^α − 1]}, with r₋₂ the radius where
/// the logarithmic slope is −2 and α the shape parameter. Enclosed mass (e.g. Cardone, Piedipalumbo
/// & Tortora 2005, Eq. 11; Retana-Montenegro et al. 2012, Eq. 12):
/// M(r) = 4π ρ₋₂ r₋₂³ (e^{2/α} / α) (2/α)^{−3/α} Γ(3/α) P(3/α, (2/α)(r/r₋₂)^α),
/// P the regularised lower incomplete gamma function.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Einasto {
    pub rho_minus2_msun_kpc3: f64,
    pub r_minus2_kpc: f64,
    pub alpha: f64,
}

impl Einasto {
    /// An Einasto halo from ρ₋₂ (Msun/kpc³), r₋₂ (kpc) and α.
    pub fn new(
        rho_minus2_msun_kpc3: f64,
        r_minus2_kpc: f64,
        alpha: f64,
    ) -> Result<Self, PhysicsError> {
        Ok(Self {
            rho_minus2_msun_kpc3: require_positive(
                "Einasto density at r-2 [Msun/kpc3]",
                rho_minus2_msun_kpc3,
            )?,
            r_minus2_kpc: require_positive("Einasto radius r-2 [kpc]", r_minus2_kpc)?,
            alpha: require_positive("Einasto alpha", alpha)?,
        })
    }

    /// ln of M(r) / (4π ρ₋₂ r₋₂³) as r → ∞: ln[(e^{2/α}/α) (2/α)^{−3/α} Γ(3/α)].
    fn ln_total_mass_factor(alpha: f64) -> f64 {
        let two_over_alpha = 2.0 / alpha;
        two_over_alpha - alpha.ln() - 3.0 / alpha * two_over_alpha.ln() + ln_gamma(3.0 / alpha)
    }

    /// An Einasto halo from V200 (km/s), c200 = r200 / r₋₂ and α: r200 = V200 / (10 H0),
    /// ρ₋₂ such that M(r200) = V200² r200 / G.
    pub fn from_v200_c200(
        v200_kms: f64,
        c200: f64,
        alpha: f64,
        cosmology: &Cosmology,
    ) -> Result<Self, PhysicsError> {
        require_positive("V200 [km/s]", v200_kms)?;
        require_positive("c200", c200)?;
        require_positive("Einasto alpha", alpha)?;
        let r200 = cosmology.r200_kpc_from_v200(v200_kms);
        let r_minus2 = r200 / c200;
        let m200 = v200_kms * v200_kms * r200 / G_KPC_KMS2_PER_MSUN;
        let fraction = regularized_lower_gamma(3.0 / alpha, 2.0 / alpha * c200.powf(alpha));
        let ln_unit_mass = (4.0 * PI * r_minus2.powi(3)).ln() + Self::ln_total_mass_factor(alpha);
        let rho_minus2 = (m200.ln() - ln_unit_mass - fraction.ln()).exp();
        Self::new(rho_minus2, r_minus2, alpha)
    }
}

impl Einasto {
    /// [`Einasto::from_v200_c200`] with the halo's virial quantities (r200 = c200 r₋₂,
    /// M200 = V200² r200 / G).
    pub fn with_virial(
        v200_kms: f64,
        c200: f64,
        alpha: f64,
        cosmology: &Cosmology,
    ) -> Result<(Self, VirialQuantities), PhysicsError> {
        let halo = Self::from_v200_c200(v200_kms, c200, alpha, cosmology)?;
        let r200_kpc = c200 * halo.r_minus2_kpc;
        let virial = VirialQuantities {
            v200_kms,
            c200,
            r200_kpc,
            m200_msun: v200_kms * v200_kms * r200_kpc / G_KPC_KMS2_PER_MSUN,
        };
        Ok((halo, virial))
    }
}

impl HaloProfile for Einasto {
    fn density_msun_kpc3(&self, radius_kpc: f64) -> f64 {
        let x = radius_kpc.max(0.0) / self.r_minus2_kpc;
        self.rho_minus2_msun_kpc3 * (-2.0 / self.alpha * (x.powf(self.alpha) - 1.0)).exp()
    }
    fn enclosed_mass_msun(&self, radius_kpc: f64) -> f64 {
        let x = radius_kpc.max(0.0) / self.r_minus2_kpc;
        let a = self.alpha;
        let fraction = regularized_lower_gamma(3.0 / a, 2.0 / a * x.powf(a));
        4.0 * PI
            * self.rho_minus2_msun_kpc3
            * self.r_minus2_kpc.powi(3)
            * Self::ln_total_mass_factor(a).exp()
            * fraction
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn peak(halo: &dyn HaloProfile, r_max: f64) -> (f64, f64) {
        // Golden-section search for the maximum of V(r) on (0, r_max].
        let (mut a, mut b) = (1e-6 * r_max, r_max);
        let g = 0.5 * (5f64.sqrt() - 1.0);
        for _ in 0..200 {
            let c = b - g * (b - a);
            let d = a + g * (b - a);
            if halo.v_circ_kms(c) > halo.v_circ_kms(d) {
                b = d;
            } else {
                a = c;
            }
        }
        let r = 0.5 * (a + b);
        (r, halo.v_circ_kms(r))
    }

    #[test]
    fn nfw_worked_example_matches_scipy() {
        // Reference: NFW (1997) with Δ = 200 ρ_crit, H0 = 70; worked example M200 = 1e12 Msun,
        // c = 10 computed with scipy (tests/reference/check_values.md).
        let cosmo = Cosmology::default();
        let halo = Nfw::from_m200_c200(1e12, 10.0, &cosmo).expect("valid");
        let virial = halo.virial(&cosmo).expect("virial");
        assert_relative_eq!(virial.r200_kpc, 206.2790, max_relative = 1e-6);
        assert_relative_eq!(virial.v200_kms, 144.3953, max_relative = 1e-6);
        assert_relative_eq!(virial.c200, 10.0, max_relative = 1e-10);
        assert_relative_eq!(halo.r_s_kpc, 20.6279, max_relative = 1e-5);
        assert_relative_eq!(halo.rho_s_msun_kpc3, 6.089582e6, max_relative = 1e-6);
        for (r, v) in [
            (1.0, 56.449),
            (5.0, 112.582),
            (10.0, 140.946),
            (50.0, 173.805),
            (100.0, 164.531),
        ] {
            assert_relative_eq!(halo.v_circ_kms(r), v, max_relative = 1e-5);
        }
        let (r_max, v_max) = peak(&halo, 200.0);
        assert_relative_eq!(v_max, 174.012, max_relative = 1e-5);
        assert_relative_eq!(r_max, 44.610, max_relative = 1e-4);
    }

    #[test]
    fn nfw_peak_ratio_matches_scipy() {
        // Reference: V_max at 2.16258 r_s; V_max/V200 = 1.06206 (c=5), 1.20511 (c=10),
        // 1.43769 (c=20) (scipy; tests/reference/check_values.md).
        let cosmo = Cosmology::default();
        for (c, ratio) in [(5.0, 1.06206), (10.0, 1.20511), (20.0, 1.43769)] {
            let halo = Nfw::from_v200_c200(100.0, c, &cosmo).expect("valid");
            let (r_max, v_max) = peak(&halo, 10.0 * halo.r_s_kpc);
            assert_relative_eq!(r_max / halo.r_s_kpc, 2.16258, max_relative = 1e-4);
            assert_relative_eq!(v_max / 100.0, ratio, max_relative = 1e-5);
        }
    }

    #[test]
    fn generic_virial_quantities_agree_with_the_nfw_closed_form() {
        let cosmo = Cosmology::default();
        let halo = Nfw::from_m200_c200(1e11, 12.0, &cosmo).expect("valid");
        let closed = halo.virial(&cosmo).expect("virial");
        let generic = virial_quantities(&halo, halo.r_s_kpc, &cosmo).expect("virial");
        assert_relative_eq!(generic.r200_kpc, closed.r200_kpc, max_relative = 1e-10);
        assert_relative_eq!(generic.m200_msun, 1e11, max_relative = 1e-9);
        assert_relative_eq!(generic.c200, 12.0, max_relative = 1e-9);
        // Burkert r_−2: the log-slope there is −2.
        let x = Burkert::r_minus2_over_r0();
        let b = Burkert::new(1e7, 1.0).expect("valid");
        let h = 1e-6;
        let slope = (b.density_msun_kpc3(x * (1.0 + h)).ln()
            - b.density_msun_kpc3(x * (1.0 - h)).ln())
            / ((1.0 + h).ln() - (1.0 - h).ln());
        assert_relative_eq!(slope, -2.0, max_relative = 1e-8);
    }

    #[test]
    fn radius_at_density_inverts_the_profile() {
        let halo = Nfw::from_rho_s_r_s(1e7, 5.0).expect("valid");
        for r in [1e-4, 0.3, 5.0, 80.0, 1e4] {
            let rho = halo.density_msun_kpc3(r);
            assert_relative_eq!(halo.radius_at_density_kpc(rho), r, max_relative = 1e-12);
        }
    }

    #[test]
    fn cored_profiles_mass_is_the_integral_of_density() {
        // Checks the closed-form masses against a numerical integral of 4π r² ρ.
        let halos: [&dyn HaloProfile; 2] = [
            &Burkert::new(3e7, 2.0).expect("valid"),
            &PseudoIsothermal::new(3e7, 2.0).expect("valid"),
        ];
        for halo in halos {
            let n = 20000;
            let r_end = 7.0;
            let h = r_end / f64::from(n);
            let mut mass = 0.0;
            for i in 0..n {
                // Simpson's rule on each cell.
                let a = f64::from(i) * h;
                let f = |r: f64| 4.0 * PI * r * r * halo.density_msun_kpc3(r);
                mass += h / 6.0 * (f(a) + 4.0 * f(a + 0.5 * h) + f(a + h));
            }
            assert_relative_eq!(halo.enclosed_mass_msun(r_end), mass, max_relative = 1e-10);
            // Small-radius series continuity.
            let r = 2.0 * 1e-3;
            assert_relative_eq!(
                halo.enclosed_mass_msun(r * 0.9999),
                halo.enclosed_mass_msun(r * 1.0001),
                max_relative = 1e-3
            );
        }
    }

    #[test]
    fn einasto_mass_is_the_integral_of_density_and_matches_v200() {
        let cosmology = Cosmology::default();
        for alpha in [0.12, 0.17, 0.3, 0.6] {
            let halo = Einasto::from_v200_c200(80.0, 9.0, alpha, &cosmology).expect("halo");
            // Trapezoid in ln r of 4π r³ ρ(r) from 1e-6 r₋₂ to 3 r₋₂.
            let (lo, hi) = (
                (1e-6 * halo.r_minus2_kpc).ln(),
                (3.0 * halo.r_minus2_kpc).ln(),
            );
            let n = 40_000;
            let h = (hi - lo) / f64::from(n);
            let integrand = |t: f64| {
                let r = t.exp();
                4.0 * PI * r.powi(3) * halo.density_msun_kpc3(r)
            };
            let mut sum = 0.5 * (integrand(lo) + integrand(hi));
            for k in 1..n {
                sum += integrand(lo + h * f64::from(k));
            }
            assert_relative_eq!(
                halo.enclosed_mass_msun(3.0 * halo.r_minus2_kpc),
                sum * h,
                max_relative = 1e-6
            );
            // V200 comes back at r200 = c200 r₋₂, and r₋₂ is where the log-slope is −2.
            let r200 = 9.0 * halo.r_minus2_kpc;
            assert_relative_eq!(halo.v_circ_kms(r200), 80.0, max_relative = 1e-10);
            let slope = |r: f64| {
                let e = 1e-5;
                (halo.density_msun_kpc3(r * (1.0 + e)).ln()
                    - halo.density_msun_kpc3(r * (1.0 - e)).ln())
                    / ((1.0 + e).ln() - (1.0 - e).ln())
            };
            assert_relative_eq!(slope(halo.r_minus2_kpc), -2.0, max_relative = 1e-6);
        }
    }

    #[test]
    fn einasto_matches_the_published_check_values() {
        // Reference: tests/reference/check_values.md (Einasto, scipy 1.17 gammainc): V200 = 100
        // km/s, c200 = 10, α = 0.18, H0 = 70 → V_c(1, 5, 20 kpc) = 53.682638, 93.868721,
        // 117.680827 km/s. Tolerance 1e-7 relative (the values are quoted to 8 digits).
        let halo = Einasto::from_v200_c200(100.0, 10.0, 0.18, &Cosmology::default()).expect("halo");
        for (r, v) in [(1.0, 53.682638), (5.0, 93.868721), (20.0, 117.680827)] {
            assert_relative_eq!(halo.v_circ_kms(r), v, max_relative = 1e-7);
        }
    }
}
