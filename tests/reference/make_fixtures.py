#!/usr/bin/env python3
"""Independent scipy solutions of the isothermal-Jeans SIDM problems Caldera solves.

Writes tests/reference/fixtures/jeans_scipy.json, which the Rust checks in tests/ compare to at a
relative tolerance of 1e-4. CI re-runs this script before the tests, so the fixture always comes
from scipy itself.

Method (Kaplinghat, Tulin & Yu 2016; with baryons Kamada et al. 2017):
  rate condition  rho1 = 1 / ((4/sqrt(pi)) sigma0 (sigma/m) t_age)
  Jeans equation  d ln rho/dr = -G (M_dm + M_b) / (sigma0^2 r^2),  dM_dm/dr = 4 pi r^2 rho
  matching        rho and M continuous at r1 with an NFW halo.
Integration: scipy.integrate.solve_ivp (DOP853, rtol 1e-12) in physical radius, with a terminal
event at rho = rho1. Roots: scipy.optimize.brentq and scipy.optimize.root (hybr).
Constants: astropy.constants / astropy.units.
"""

import json
import math
import pathlib

import numpy as np
import scipy
from scipy.integrate import quad, solve_ivp
from scipy.optimize import brentq, root
from astropy import constants as const
from astropy import units as u

G = const.G.to(u.kpc * (u.km / u.s) ** 2 / u.Msun).value
CM2G = (1 * u.cm**2 / u.g).to(u.kpc**2 / u.Msun).value
GYR_IN_KPC_KMS = (1 * u.Gyr).to(u.kpc / (u.km / u.s)).value
H0 = 70.0 * 1e-3  # km/s/kpc
RHO_CRIT = 3 * H0**2 / (8 * math.pi * G)


# ---------- baryons ----------
def hernquist(mass, a):
    return {"kind": "hernquist", "mass_msun": mass, "scale_radius_kpc": a}


# An invented tabulated galaxy (velocities at Upsilon = 1 for disk and bulge), with a gas hole
# (negative gas term) at the centre to exercise the sign rule and the clamp.
TABLE = {
    "kind": "table",
    "radii_kpc": [0.3, 0.7, 1.2, 2.0, 3.0, 4.5, 6.0, 8.0, 10.0, 13.0],
    "v_gas_kms": [-3.0, 4.0, 8.0, 12.0, 15.0, 17.0, 18.0, 18.5, 18.0, 17.0],
    "v_disk_kms": [25.0, 45.0, 58.0, 66.0, 68.0, 65.0, 60.0, 54.0, 49.0, 43.0],
    "v_bulge_kms": [40.0, 42.0, 38.0, 32.0, 27.0, 22.0, 19.0, 16.5, 14.8, 13.0],
    "upsilon_disk": 0.5,
    "upsilon_bulge": 0.7,
}


def signed(v):
    return v * abs(v)


def baryon_mass_fn(b):
    """Enclosed mass seen by the Jeans equation (clamped at zero), Msun."""
    if b is None:
        return lambda r: 0.0
    if b["kind"] == "hernquist":
        M, a = b["mass_msun"], b["scale_radius_kpc"]
        return lambda r: M * r * r / (r + a) ** 2
    radii = np.array(b["radii_kpc"])
    v2 = np.array(
        [
            signed(g) + b["upsilon_disk"] * signed(d) + b["upsilon_bulge"] * signed(bu)
            for g, d, bu in zip(b["v_gas_kms"], b["v_disk_kms"], b["v_bulge_kms"])
        ]
    )
    mass = radii * v2 / G

    def signed_mass(r):
        if r <= radii[0]:
            return mass[0] * (r / radii[0]) ** 3
        if r >= radii[-1]:
            return mass[-1]
        return float(np.interp(r, radii, mass))

    return lambda r: max(0.0, signed_mass(r))


def baryon_break_points(b):
    return [] if b is None or b["kind"] != "table" else list(b["radii_kpc"])


# ---------- NFW ----------
def f_nfw(x):
    return math.log1p(x) - x / (1 + x)


def nfw_from_m200_c(m200, c):
    r200 = (3 * m200 / (4 * math.pi * 200 * RHO_CRIT)) ** (1 / 3)
    rho_s = 200 / 3 * RHO_CRIT * c**3 / f_nfw(c)
    return rho_s, r200 / c


def nfw_mass(rho_s, r_s, r):
    return 4 * math.pi * rho_s * r_s**3 * f_nfw(r / r_s)


def nfw_virial(rho_s, r_s):
    target = rho_s / (200 / 3 * RHO_CRIT)
    c = brentq(lambda c: c**3 / f_nfw(c) - target, 1e-3, 1e4, xtol=1e-14, rtol=1e-14)
    r200 = c * r_s
    v200 = 10 * H0 * r200
    return v200, c


# ---------- isothermal core ----------
def rate_density(sigma0, sigma_m, age_gyr):
    return 1.0 / (4 / math.sqrt(math.pi) * sigma0 * sigma_m * CM2G * age_gyr * GYR_IN_KPC_KMS)


def integrate_core(rho0, sigma0, mb, breaks, rho_stop=None, r_max=None):
    """Integrates outward; stops at rho = rho_stop (event) or at r_max. Returns the solution."""
    rc = sigma0 / math.sqrt(4 * math.pi * G * rho0)
    r0 = 1e-7 * min([rc] + [bp for bp in breaks])
    base = quad(lambda r: mb(r) / r**2, 0, r0, limit=200)[0] if mb(r0) > 0 else 0.0
    lnrho0 = -(2 * math.pi * G * rho0 / (3 * sigma0**2)) * r0**2 - G * base / sigma0**2
    y0 = [lnrho0, 4 / 3 * math.pi * rho0 * r0**3]

    def rhs(r, y):
        return [-G * (y[1] + mb(r)) / (sigma0**2 * r**2), 4 * math.pi * r**2 * rho0 * math.exp(y[0])]

    events = None
    if rho_stop is not None:
        def hit(r, y):
            return y[0] - math.log(rho_stop / rho0)
        hit.terminal = True
        hit.direction = -1
        events = hit
    return solve_ivp(
        rhs,
        (r0, r_max if r_max is not None else 1e6),
        y0,
        method="DOP853",
        rtol=1e-12,
        atol=[1e-14, 1e-14 * rho0 * r0**3],
        events=events,
        dense_output=True,
    )


def core_first(rho0, sigma0, sigma_m, age, baryons):
    mb = baryon_mass_fn(baryons)
    rho1 = rate_density(sigma0, sigma_m, age)
    sol = integrate_core(rho0, sigma0, mb, baryon_break_points(baryons), rho_stop=rho1)
    r1 = sol.t_events[0][0]
    m1 = sol.y_events[0][0][1]
    q = m1 / (4 * math.pi * r1**3 * rho1)
    x = brentq(lambda x: (1 + x) ** 2 * f_nfw(x) / x**2 - q, 1e-8, 1e6, xtol=1e-15, rtol=1e-15)
    return {"r1": r1, "m1": m1, "rho1": rho1, "r_s": r1 / x, "rho_s": rho1 * x * (1 + x) ** 2, "sol": sol}


def v_halo(core, radii):
    out = []
    for r in radii:
        if r <= core["r1"]:
            m = core["sol"].sol(r)[1]
        else:
            m = nfw_mass(core["rho_s"], core["r_s"], r)
        out.append(math.sqrt(G * m / r))
    return out


def halo_first(rho_s, r_s, sigma_m, age, baryons, starts):
    mb = baryon_mass_fn(baryons)
    breaks = baryon_break_points(baryons)

    def residual(p):
        rho0, sigma0 = math.exp(p[0]), math.exp(p[1])
        rho1 = rate_density(sigma0, sigma_m, age)
        if rho1 >= rho0:
            return [1e3, 1e3]
        sol = integrate_core(rho0, sigma0, mb, breaks, rho_stop=rho1)
        r1, m1 = sol.t_events[0][0], sol.y_events[0][0][1]
        x = brentq(lambda x: x * (1 + x) ** 2 - rho_s / rho1, 1e-12, 1e8, xtol=1e-15, rtol=1e-15)
        return [math.log(r1 / (x * r_s)), math.log(m1 / nfw_mass(rho_s, r_s, x * r_s))]

    found = []
    for rho0, sigma0 in starts:
        res = root(residual, [math.log(rho0), math.log(sigma0)], method="hybr", options={"xtol": 1e-13})
        if res.success and max(abs(v) for v in residual(res.x)) < 1e-9:
            found.append((math.exp(res.x[0]), math.exp(res.x[1])))
    found.sort()
    return found


def baryon_record(b):
    return {"kind": "none"} if b is None else b


def main():
    radii = [0.25, 0.5, 1.0, 2.0, 3.5, 5.0, 8.0, 12.0, 20.0, 35.0, 50.0]
    out = {
        "generator": "tests/reference/make_fixtures.py",
        "scipy_version": scipy.__version__,
        "G_kpc_kms2_per_msun": G,
        "cm2_per_g_in_kpc2_per_msun": CM2G,
        "core_first": [],
        "halo_first": [],
    }
    core_cases = [
        (1e8, 40.0, 3.0, 10.0, None),
        (3e7, 60.0, 1.0, 10.0, None),
        (5e8, 25.0, 0.5, 10.0, None),
        (2e8, 45.0, 2.0, 10.0, hernquist(2e9, 1.0)),
        (5e7, 55.0, 1.5, 8.0, TABLE),
        (3e8, 70.0, 0.8, 12.0, TABLE),
    ]
    for rho0, sigma0, sm, age, b in core_cases:
        core = core_first(rho0, sigma0, sm, age, b)
        v200, c200 = nfw_virial(core["rho_s"], core["r_s"])
        out["core_first"].append({
            "rho0_msun_kpc3": rho0, "sigma0_kms": sigma0, "sigma_m_cm2_g": sm, "age_gyr": age,
            "baryons": baryon_record(b),
            "r1_kpc": core["r1"], "rho_s_msun_kpc3": core["rho_s"], "r_s_kpc": core["r_s"],
            "v200_kms": v200, "c200": c200,
            "radii_kpc": radii, "v_halo_kms": v_halo(core, radii),
        })
    halo_cases = [
        (1e11, 10.0, 3.0, 10.0, None),
        (1e11, 10.0, 3.0, 10.0, hernquist(1e9, 2.0)),
        (1e11, 10.0, 3.0, 10.0, hernquist(3e9, 1.5)),
        (1e11, 10.0, 10.0, 10.0, None),
        (3e11, 9.0, 1.0, 10.0, TABLE),
        (5e10, 12.0, 2.0, 10.0, TABLE),
    ]
    starts = [(r, s) for r in (3e6, 1e7, 3e7, 1e8, 3e8) for s in (30.0, 45.0, 60.0, 80.0, 110.0)]
    for m200, c, sm, age, b in halo_cases:
        rho_s, r_s = nfw_from_m200_c(m200, c)
        sols = halo_first(rho_s, r_s, sm, age, b, starts)
        if not sols:
            raise SystemExit(f"no halo-first solution for {m200}, {c}, {sm}, {b}")
        rho0, sigma0 = sols[0]
        core = core_first(rho0, sigma0, sm, age, b)
        out["halo_first"].append({
            "m200_msun": m200, "c200": c, "sigma_m_cm2_g": sm, "age_gyr": age,
            "baryons": baryon_record(b),
            "rho0_msun_kpc3": rho0, "sigma0_kms": sigma0, "r1_kpc": core["r1"],
            "radii_kpc": radii, "v_halo_kms": v_halo(core, radii),
        })
        print(f"halo-first M200={m200:.3g} c={c} sigma/m={sm} baryons={baryon_record(b)['kind']}: "
              f"rho0={rho0:.6e} sigma0={sigma0:.6f} r1={core['r1']:.6f} ({len(sols)} start(s) converged)")
    path = pathlib.Path(__file__).parent / "fixtures" / "jeans_scipy.json"
    path.write_text(json.dumps(out, indent=1) + "\n")
    print(f"wrote {path}")


if __name__ == "__main__":
    main()
