#!/usr/bin/env python3
"""Bayesian evidence of three targets by an outside, general-purpose sampler: dynesty's static
nested sampling (Speagle 2020; Skilling 2004), seeded. Caldera's thermodynamic integration over
its parallel-tempering ladder must agree within the combined uncertainties
(tests/evidence_vs_dynesty.rs).

1. A correlated Gaussian in 3 dimensions (unit variances, correlation 0.8^|i-j|), normalised,
   under a uniform prior on [-10, 10]^3: ln Z = -3 ln 20 analytically (the Gaussian's mass
   outside the box is negligible).
2. Two Gaussian shells in 2 dimensions (Feroz & Hobson 2008, their section 6.2 setup: radius 2,
   width 0.1, centres (+-3.5, 0)), uniform prior on [-6, 6]^2; ln Z also by direct quadrature on a
   fine grid here.
3. An NFW rotation-curve posterior of the demo galaxy Kiln D03 with fixed nuisances (disk
   mass-to-light ratio 0.5, the table's distance and inclination): parameters log10 V200
   (uniform on [1.3, 2.5], V200 in km/s) and log10 c200 (uniform on [0.3, 1.6]); H0 = 70
   km/s/Mpc so r200 = 100 V200 / H0 kpc; Gaussian likelihood with its normalisation.

Writes tests/reference/fixtures/evidence_dynesty.json.
"""

import json
import pathlib

import dynesty
import numpy as np

HERE = pathlib.Path(__file__).resolve().parent
ROOT = HERE.parent.parent
SEED = 20261202


def correlated_gaussian():
    d = 3
    cov = np.array([[0.8 ** abs(i - j) for j in range(d)] for i in range(d)])
    inv = np.linalg.inv(cov)
    _, logdet = np.linalg.slogdet(cov)
    norm = -0.5 * (d * np.log(2 * np.pi) + logdet)

    def loglike(x):
        return norm - 0.5 * x @ inv @ x

    def prior_transform(u):
        return 20.0 * u - 10.0

    return d, loglike, prior_transform, -d * np.log(20.0), {"dim": d, "rho": 0.8, "half_width": 10.0}


SHELL = {"radius": 2.0, "width": 0.1, "centres": [[-3.5, 0.0], [3.5, 0.0]], "half_width": 6.0}


def shell_loglike(x):
    w, r = SHELL["width"], SHELL["radius"]
    terms = [
        -0.5 * (np.hypot(x[0] - c[0], x[1] - c[1]) - r) ** 2 / w**2 - 0.5 * np.log(2 * np.pi * w**2)
        for c in SHELL["centres"]
    ]
    return np.logaddexp(*terms)


def shells():
    def prior_transform(u):
        return 12.0 * u - 6.0

    # Quadrature: the likelihood on a 4001^2 grid over the prior box (spacing 0.003, a thirtieth
    # of the shell width), times the prior density 1/144.
    g = np.linspace(-6.0, 6.0, 4001)
    x, y = np.meshgrid(g, g, indexing="ij")
    w, r = SHELL["width"], SHELL["radius"]
    like = sum(
        np.exp(-0.5 * (np.hypot(x - c[0], y - c[1]) - r) ** 2 / w**2) / np.sqrt(2 * np.pi * w**2)
        for c in SHELL["centres"]
    )
    h = g[1] - g[0]
    integral = np.trapezoid(np.trapezoid(like, dx=h, axis=1), dx=h)
    return 2, shell_loglike, prior_transform, float(np.log(integral / 144.0)), SHELL


def read_demo(name):
    lines = (ROOT / "demo_galaxies" / name).read_text().splitlines()
    rows = [l.split() for l in lines if l and not l.startswith("#")]
    header, data = rows[0], np.array(rows[1:], dtype=float)
    return {k: data[:, i] for i, k in enumerate(header)}


NFW = {"galaxy": "kiln_d03.ecsv", "upsilon_disk": 0.5, "hubble_kms_mpc": 70.0,
       "log10_v200": [1.3, 2.5], "log10_c200": [0.3, 1.6]}


def nfw_galaxy():
    t = read_demo(NFW["galaxy"])
    r, v, e = t["radius"], t["v_obs"], t["e_v_obs"]
    vb2 = t["v_gas"] * np.abs(t["v_gas"]) + NFW["upsilon_disk"] * t["v_disk"] * np.abs(t["v_disk"])
    norm = -np.sum(np.log(np.sqrt(2 * np.pi) * e))

    def mass(y):
        return np.log1p(y) - y / (1.0 + y)

    def loglike(p):
        v200, c = 10.0 ** p[0], 10.0 ** p[1]
        r200 = 100.0 * v200 / NFW["hubble_kms_mpc"]
        x = r / r200
        vh2 = v200**2 * mass(c * x) / (x * mass(c))
        model = np.sqrt(vh2 + vb2)
        return norm - 0.5 * np.sum(((v - model) / e) ** 2)

    (a0, b0), (a1, b1) = NFW["log10_v200"], NFW["log10_c200"]

    def prior_transform(u):
        return np.array([a0 + (b0 - a0) * u[0], a1 + (b1 - a1) * u[1]])

    return 2, loglike, prior_transform, None, NFW


def run(make, seed):
    d, loglike, prior_transform, analytic, setup = make()
    sampler = dynesty.NestedSampler(loglike, prior_transform, d, nlive=1500, bound="multi",
                                    sample="rwalk", rstate=np.random.default_rng(seed))
    sampler.run_nested(dlogz=0.01, print_progress=False)
    res = sampler.results
    out = {"log_evidence": float(res.logz[-1]), "log_evidence_err": float(res.logzerr[-1]),
           "setup": setup}
    if analytic is not None:
        out["analytic"] = analytic
    return out


def main():
    out = {
        "source": f"dynesty {dynesty.__version__}, static nested sampling, nlive 1500, "
                  "bound multi, sample rwalk, dlogz 0.01",
        "correlated_gaussian": run(correlated_gaussian, SEED),
        "gaussian_shells": run(shells, SEED + 1),
        "nfw_kiln_d03": run(nfw_galaxy, SEED + 2),
    }
    path = HERE / "fixtures" / "evidence_dynesty.json"
    path.write_text(json.dumps(out, indent=2) + "\n")
    for k in ("correlated_gaussian", "gaussian_shells", "nfw_kiln_d03"):
        v = out[k]
        print(k, v["log_evidence"], "+-", v["log_evidence_err"], "analytic", v.get("analytic"))


if __name__ == "__main__":
    main()
