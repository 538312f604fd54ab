#!/usr/bin/env python3
"""Independent scipy values for Caldera's velocity-dependent cross-sections and population fits.

Writes tests/reference/fixtures/cross_section_scipy.json, which tests/cross_section_vs_scipy.rs
compares to. CI re-runs this script before the tests, so the fixture always comes from scipy.

1. sigma(v)/m and its Maxwellian average <sigma v>/m for the fall-off, Yukawa (Born transfer) and
   s-wave resonance (+ background) models of crates/physics/src/cross_section.rs, by scipy.integrate.quad over the relative
   speed v with f(v) = v^2 exp(-v^2 / (4 sigma0^2)) / (2 sqrt(pi) sigma0^3), epsrel 1e-12.
   Unit conversions from astropy.constants / astropy.units.
2. The kernel density estimate the population likelihood uses: scipy.stats.gaussian_kde with the
   same bandwidth (Silverman's rule 0.9 min(s, IQR/1.34) n^(-1/5), computed here with numpy), and
   the reflection at the lower prior bound as a KDE of the samples plus their mirror images.
"""

import json
import math
import pathlib

import numpy as np
import scipy
from scipy.integrate import quad
from scipy.stats import gaussian_kde
from astropy import constants as const
from astropy import units as u

C_KMS = const.c.to(u.km / u.s).value
HBARC2_MB_GEV2 = ((const.hbar * const.c) ** 2).to(u.GeV**2 * u.mbarn).value
GRAM_PER_GEV = (1 * u.GeV / const.c**2).to(u.g).value
CM2_PER_MB = (1 * u.mbarn).to(u.cm**2).value


def natural_per_mass_to_cm2_g(sigma_gev2, mass_gev):
    return sigma_gev2 * HBARC2_MB_GEV2 * CM2_PER_MB / (mass_gev * GRAM_PER_GEV)


def sigma_m(model, v_kms):
    kind = model["kind"]
    if kind == "fall_off":
        return model["sigma0_cm2_g"] / (1 + (v_kms / model["w_kms"]) ** 2) ** 2
    if kind == "yukawa":
        m, mphi, alpha = model["dm_mass_gev"], model["mediator_mass_mev"] * 1e-3, model["alpha"]
        v = v_kms / C_KMS
        r2 = (m * v / mphi) ** 2
        if r2 < 1e-6:
            sigma = 4 * math.pi * alpha**2 * m**2 / mphi**4 * (1 - 4 * r2 / 3)
        else:
            sigma = 8 * math.pi * alpha**2 / (m**2 * v**4) * (math.log1p(r2) - r2 / (1 + r2))
        return natural_per_mass_to_cm2_g(sigma, m)
    if kind == "resonance":
        m, delta, gamma = model["dm_mass_gev"], model["delta"], model["gamma"]
        v = v_kms / C_KMS
        vr2 = 8 * delta
        sigma = 64 * math.pi * gamma**2 / (m**2 * ((v * v - vr2) ** 2 + 4 * gamma**2 * v * v))
        return natural_per_mass_to_cm2_g(sigma, m) + model["background_cm2_g"]
    raise ValueError(kind)


def sigma_v_average(model, sigma0):
    def integrand(v):
        f = v * v * math.exp(-v * v / (4 * sigma0**2)) / (2 * math.sqrt(math.pi) * sigma0**3)
        return sigma_m(model, v) * v * f

    top = 40 * sigma0
    points = [sigma0 * k for k in (0.01, 0.1, 0.5, 1, 2, 4, 8)]
    if model["kind"] == "resonance":
        vr = 2 * math.sqrt(2 * model["delta"]) * C_KMS
        width = model["gamma"] * C_KMS
        points += [vr + s * width * k for s in (-1, 1) for k in (0, 0.5, 2, 10, 100)]
    if model["kind"] == "fall_off":
        points += [model["w_kms"] * k for k in (0.1, 1, 10)]
    if model["kind"] == "yukawa":
        scale = model["mediator_mass_mev"] * 1e-3 / model["dm_mass_gev"] * C_KMS
        points += [scale * k for k in (0.1, 1, 10)]
    points = sorted(p for p in set(points) if 0 < p < top)
    edges = [0.0] + points + [top]
    total = 0.0
    for a, b in zip(edges[:-1], edges[1:]):
        value, _ = quad(integrand, a, b, epsabs=0, epsrel=1e-12, limit=500)
        total += value
    return total


MODELS = [
    {"kind": "fall_off", "sigma0_cm2_g": 10.0, "w_kms": 100.0},
    {"kind": "fall_off", "sigma0_cm2_g": 50.0, "w_kms": 3.0},
    {"kind": "fall_off", "sigma0_cm2_g": 1.0, "w_kms": 5000.0},
    {"kind": "yukawa", "dm_mass_gev": 10.0, "mediator_mass_mev": 1.0, "alpha": 1e-5},
    {"kind": "yukawa", "dm_mass_gev": 1000.0, "mediator_mass_mev": 0.01, "alpha": 1e-6},
    {"kind": "yukawa", "dm_mass_gev": 0.5, "mediator_mass_mev": 100.0, "alpha": 1e-3},
    {"kind": "resonance", "dm_mass_gev": 10.0, "delta": 1e-8, "gamma": 1e-4, "background_cm2_g": 0.1},
    {"kind": "resonance", "dm_mass_gev": 10.0, "delta": 1e-8, "gamma": 1e-6, "background_cm2_g": 0.0},
    {"kind": "resonance", "dm_mass_gev": 100.0, "delta": 1e-6, "gamma": 1e-3, "background_cm2_g": 0.01},
]
SIGMA0S = [3.0, 10.0, 30.0, 100.0, 300.0, 1000.0]
SPEEDS = [1.0, 30.0, 100.0, 300.0, 1000.0, 3000.0]


SERDE_NAMES = {"fall_off": "FallOff", "yukawa": "Yukawa", "resonance": "Resonance"}


def as_caldera(model):
    """The model in the form Caldera's CrossSection reads: {"FallOff": {"sigma0_cm2_g": ...}}."""
    fields = {k: v for k, v in model.items() if k != "kind"}
    return {SERDE_NAMES[model["kind"]]: fields}


def silverman(values):
    values = np.asarray(values)
    sd = values.std(ddof=1)
    q75, q25 = np.percentile(values, [75, 25])
    iqr = q75 - q25
    spread = min(sd, iqr / 1.34) if iqr > 0 else sd
    return max(0.9 * spread * len(values) ** (-0.2), 0.02)


def kde_case(samples, lower, upper, points):
    samples = np.asarray(samples)
    h = silverman(samples)
    mirrored = np.concatenate([samples, 2 * lower - samples])
    kde = gaussian_kde(mirrored, bw_method=h / mirrored.std(ddof=1))
    # Density of the samples with the mirror images folded back: twice the mirrored KDE.
    density = 2 * kde(np.asarray(points))
    return {
        "samples": samples.tolist(),
        "lower": lower,
        "upper": upper,
        "bandwidth": h,
        "points": list(points),
        "log_density": np.log(density).tolist(),
    }


def main():
    rng = np.random.default_rng(20261202)
    far = rng.normal(0.3, 0.4, 400)
    # A posterior piled up at the lower bound (an upper limit), log10 sigma/m >= -2.
    limit = -2 + np.abs(rng.normal(0.0, 0.8, 400))
    out = {
        "source": "scipy %s quad / gaussian_kde; astropy constants" % scipy.__version__,
        "averages": [
            {
                "model": as_caldera(model),
                "sigma0_kms": SIGMA0S,
                "sigma_v_over_m_cm2_g_kms": [sigma_v_average(model, s) for s in SIGMA0S],
                "speeds_kms": SPEEDS,
                "sigma_m_cm2_g": [sigma_m(model, v) for v in SPEEDS],
            }
            for model in MODELS
        ],
        "kde": [
            kde_case(far, -2.0, 2.0, [-0.8, -0.2, 0.3, 0.9, 1.5]),
            kde_case(limit, -2.0, 2.0, [-2.0, -1.9, -1.5, -0.5, 0.5]),
        ],
    }
    path = pathlib.Path(__file__).parent / "fixtures" / "cross_section_scipy.json"
    path.write_text(json.dumps(out, indent=1) + "\n")
    print("wrote", path)


if __name__ == "__main__":
    main()
