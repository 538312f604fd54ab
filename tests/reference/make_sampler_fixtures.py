#!/usr/bin/env python3
"""Runs emcee (the reference affine-invariant ensemble sampler, stretch move a = 2) on the toy
posteriors Caldera's sampler is tested on, and writes their moments.

Output: tests/reference/fixtures/sampler_emcee.json. The Rust test
crates/infer/tests/sampler_reference.rs runs Caldera's sampler on the same densities and
compares means, variances and covariances within stated tolerances. CI re-runs this script.
"""

import json
import pathlib

import emcee
import numpy as np

OUT = pathlib.Path(__file__).parent / "fixtures" / "sampler_emcee.json"

# Correlated 3-d Gaussian.
MEAN = np.array([1.0, -2.0, 0.5])
COV = np.array([[1.0, 0.8, 0.2], [0.8, 2.0, -0.5], [0.2, -0.5, 0.5]])
PREC = np.linalg.inv(COV)


def log_gauss(x):
    d = x - MEAN
    return -0.5 * d @ PREC @ d


# A banana: x1 ~ N(0, 1), x2 | x1 ~ N(B x1^2, S2^2).
B, S2 = 1.0, 0.5


def log_banana(x):
    return -0.5 * x[0] ** 2 - 0.5 * ((x[1] - B * x[0] ** 2) / S2) ** 2


def run(log_prob, ndim, seed, nwalkers=32, nsteps=40000, burn=2000):
    rng = np.random.default_rng(seed)
    p0 = rng.normal(size=(nwalkers, ndim)) * 0.1
    sampler = emcee.EnsembleSampler(nwalkers, ndim, log_prob, moves=emcee.moves.StretchMove(a=2.0))
    sampler.random_state = np.random.RandomState(seed).get_state()
    sampler.run_mcmc(p0, nsteps, progress=False)
    chain = sampler.get_chain(discard=burn, flat=True)
    tau = sampler.get_autocorr_time(discard=burn, quiet=True)
    return {
        "n_walkers": nwalkers,
        "n_steps": nsteps,
        "burn": burn,
        "mean": chain.mean(axis=0).tolist(),
        "variance": chain.var(axis=0, ddof=1).tolist(),
        "covariance": np.cov(chain.T).tolist(),
        "quantiles_16_50_84": np.percentile(chain, [16, 50, 84], axis=0).T.tolist(),
        "tau": tau.tolist(),
        "acceptance": float(np.mean(sampler.acceptance_fraction)),
    }


def main():
    out = {
        "generator": "tests/reference/make_sampler_fixtures.py",
        "emcee_version": emcee.__version__,
        "gaussian": {"mean_exact": MEAN.tolist(), "covariance_exact": COV.tolist(), **run(log_gauss, 3, 1)},
        "banana": {"b": B, "s2": S2, "mean_exact": [0.0, B], "variance_exact": [1.0, S2**2 + 2 * B**2],
                   **run(log_banana, 2, 2)},
    }
    OUT.write_text(json.dumps(out, indent=1) + "\n")
    for name in ("gaussian", "banana"):
        print(name, "emcee mean", np.round(out[name]["mean"], 4), "var", np.round(out[name]["variance"], 4),
              "tau", np.round(out[name]["tau"], 1), "acc", round(out[name]["acceptance"], 3))


if __name__ == "__main__":
    main()
