#!/usr/bin/env python3
"""Independent scipy values of halo profiles Caldera evaluates in closed form.

Writes tests/reference/fixtures/halo_scipy.json, which tests/halo_vs_scipy.rs compares to. CI
re-runs this script before the tests.

Einasto (1965): rho(r) = rho_-2 exp(-(2/alpha) [(r/r_-2)^alpha - 1]), set by V200, c200 = r200/r_-2
and alpha, with r200 = V200 / (10 H0) and M(r200) = V200^2 r200 / G. Two independent routes:
  closed form  M(r) = 4 pi rho_-2 r_-2^3 (e^{2/a}/a) (2/a)^{-3/a} Gamma(3/a) P(3/a, (2/a) x^a)
               with scipy.special.gammainc (P) and scipy.special.gamma;
  quadrature   M(r) = int_0^r 4 pi s^2 rho(s) ds with scipy.integrate.quad (epsrel 1e-12),
               rho_-2 fixed by the same quadrature at r200.
Constants: astropy.constants / astropy.units; H0 = 70 km/s/Mpc.
"""

import json
import math
import pathlib

import numpy as np
import scipy
from scipy.integrate import quad
from scipy.special import gamma, gammainc
from astropy import constants as const
from astropy import units as u

G = const.G.to(u.kpc * (u.km / u.s) ** 2 / u.Msun).value
H0 = 70.0 * 1e-3  # km/s/kpc

CASES = [
    {"v200_kms": 60.0, "c200": 12.0, "alpha": 0.17},
    {"v200_kms": 150.0, "c200": 8.0, "alpha": 0.25},
    {"v200_kms": 35.0, "c200": 20.0, "alpha": 0.12},
    {"v200_kms": 90.0, "c200": 5.0, "alpha": 0.6},
]
RADII_KPC = [0.05, 0.3, 1.0, 2.5, 6.0, 15.0, 40.0, 120.0]


def einasto_shape(x, a):
    return math.exp(-2.0 / a * (x**a - 1.0))


def closed_form(case):
    v200, c, a = case["v200_kms"], case["c200"], case["alpha"]
    r200 = v200 / (10.0 * H0)
    rm2 = r200 / c
    m200 = v200**2 * r200 / G
    factor = math.exp(2.0 / a) / a * (2.0 / a) ** (-3.0 / a) * gamma(3.0 / a)
    rho_m2 = m200 / (4 * math.pi * rm2**3 * factor * gammainc(3.0 / a, 2.0 / a * c**a))

    def mass(r):
        return 4 * math.pi * rho_m2 * rm2**3 * factor * gammainc(3.0 / a, 2.0 / a * (r / rm2) ** a)

    return [math.sqrt(G * mass(r) / r) for r in RADII_KPC], rho_m2, rm2


def by_quadrature(case):
    v200, c, a = case["v200_kms"], case["c200"], case["alpha"]
    r200 = v200 / (10.0 * H0)
    rm2 = r200 / c
    m200 = v200**2 * r200 / G

    def unit_mass(r):
        # Integrate in ln s for accuracy over decades of radius.
        f = lambda t: 4 * math.pi * math.exp(3 * t) * einasto_shape(math.exp(t) / rm2, a)
        return quad(f, math.log(1e-8 * rm2), math.log(r), epsrel=1e-12, epsabs=0, limit=500)[0]

    rho_m2 = m200 / unit_mass(r200)
    return [math.sqrt(G * rho_m2 * unit_mass(r) / r) for r in RADII_KPC]


def main():
    out = {
        "source": f"scipy {scipy.__version__}, numpy {np.__version__}; tests/reference/make_halo_fixtures.py",
        "h0_kms_mpc": 70.0,
        "radii_kpc": RADII_KPC,
        "einasto": [],
    }
    for case in CASES:
        v_closed, rho_m2, rm2 = closed_form(case)
        v_quad = by_quadrature(case)
        worst = max(abs(p - q) / q for p, q in zip(v_closed, v_quad))
        assert worst < 1e-8, f"closed form and quadrature disagree by {worst:.2e} for {case}"
        out["einasto"].append(
            dict(case, rho_minus2_msun_kpc3=rho_m2, r_minus2_kpc=rm2, v_circ_kms=v_closed)
        )
    path = pathlib.Path(__file__).parent / "fixtures" / "halo_scipy.json"
    path.write_text(json.dumps(out, indent=1) + "\n")


if __name__ == "__main__":
    main()
