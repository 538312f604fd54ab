#!/usr/bin/env python3
"""Compare regenerated outside-reference fixtures with the committed ones.

Usage: compare_fixtures.py COMMITTED_DIR REGENERATED_DIR

Every JSON fixture must have the same structure and every number must agree to a relative
tolerance of 1e-8 (absolute 1e-12 near zero): the scripts are deterministic, but the last digits
of scipy's and numpy's floating-point results depend on the machine's BLAS and CPU. Text
fixtures (ECSV tables) must match exactly. Exits with status 1 and names each difference.

Monte Carlo estimates with their own standard error (a nested-sampling ln Z beside its
`log_evidence_err`) are the exception: a seeded nested sampler follows a different random path
once a last-digit difference changes one accept/reject decision, so the regenerated estimate is
another draw of the same estimator. It must agree with the committed one within 3 combined
standard errors, and the two errors within 25% of each other.
"""

import json
import math
import pathlib
import sys

REL, ABS = 1e-8, 1e-12
MC_SIGMAS, MC_ERR_REL = 3.0, 0.25
ESTIMATE, ERROR = "log_evidence", "log_evidence_err"


def monte_carlo_differences(a, b, where):
    """Differences of a Monte Carlo estimate and its error (see the module's description)."""
    (ea, eb), (xa, xb) = (a[ERROR], b[ERROR]), (a[ESTIMATE], b[ESTIMATE])
    if not (ea > 0 and eb > 0 and abs(ea - eb) <= MC_ERR_REL * max(ea, eb)):
        yield f"{where}.{ERROR}: committed {ea!r}, regenerated {eb!r} (beyond {MC_ERR_REL:.0%})"
    combined = math.hypot(ea, eb)
    if not abs(xa - xb) <= MC_SIGMAS * combined:
        yield (f"{where}.{ESTIMATE}: committed {xa!r}, regenerated {xb!r} "
               f"(beyond {MC_SIGMAS} x {combined:.3g})")


def differences(a, b, where):
    if isinstance(a, dict) and isinstance(b, dict):
        if sorted(a) != sorted(b):
            yield f"{where}: keys differ: {sorted(set(a) ^ set(b))}"
            return
        keys = list(a)
        if ESTIMATE in a and ERROR in a:
            yield from monte_carlo_differences(a, b, where)
            keys = [k for k in keys if k not in (ESTIMATE, ERROR)]
        for k in keys:
            yield from differences(a[k], b[k], f"{where}.{k}")
    elif isinstance(a, list) and isinstance(b, list):
        if len(a) != len(b):
            yield f"{where}: lengths {len(a)} and {len(b)}"
            return
        for i, (x, y) in enumerate(zip(a, b)):
            yield from differences(x, y, f"{where}[{i}]")
    elif isinstance(a, (int, float)) and isinstance(b, (int, float)) and not isinstance(a, bool):
        if math.isnan(a) and math.isnan(b):
            return
        if not math.isclose(a, b, rel_tol=REL, abs_tol=ABS):
            yield f"{where}: committed {a!r}, regenerated {b!r}"
    elif a != b:
        yield f"{where}: committed {a!r}, regenerated {b!r}"


def main():
    committed, regenerated = map(pathlib.Path, sys.argv[1:3])
    problems = []
    for old in sorted(committed.rglob("*")):
        if old.is_dir():
            continue
        rel = old.relative_to(committed)
        new = regenerated / rel
        if not new.exists():
            problems.append(f"{rel}: not regenerated")
        elif old.suffix == ".json":
            problems += [f"{rel}: {d}" for d in
                         differences(json.loads(old.read_text()), json.loads(new.read_text()), "")]
        elif old.read_bytes() != new.read_bytes():
            problems.append(f"{rel}: differs")
    for p in problems:
        print(p)
    print(f"{len(problems)} difference(s) between committed and regenerated fixtures")
    sys.exit(1 if problems else 0)


if __name__ == "__main__":
    main()
