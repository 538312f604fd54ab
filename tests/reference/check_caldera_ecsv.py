#!/usr/bin/env python3
"""Reads every ECSV table Caldera wrote in a folder with astropy itself, and checks the units,
metadata and radii (against each table's .truth.json). Exit status 1 on any mismatch.

Usage: python3 tests/reference/check_caldera_ecsv.py demo_galaxies
"""

import json
import pathlib
import sys

from astropy import units as u
from astropy.table import Table


def main(folder):
    tables = sorted(pathlib.Path(folder).glob("*.ecsv"))
    if not tables:
        sys.exit(f"no ECSV tables in {folder}")
    for path in tables:
        t = Table.read(path, format="ascii.ecsv")
        assert t["radius"].unit == u.kpc, (path, t["radius"].unit)
        for name in ("v_obs", "e_v_obs", "v_gas", "v_disk"):
            assert t[name].unit == u.km / u.s, (path, name, t[name].unit)
        truth_path = path.with_name(path.stem + ".truth.json")
        if truth_path.exists():
            truth = json.loads(truth_path.read_text())
            assert t.meta["name"] == truth["spec"]["name"], (path, t.meta["name"])
            assert list(t["radius"].to(u.kpc).value) == truth["radius_kpc"], path
            assert t.meta["distance_mpc"] == truth["spec"]["distance_mpc"], path
        print(f"astropy reads {path.name}: {len(t)} rows, units and metadata as written")


if __name__ == "__main__":
    main(sys.argv[1] if len(sys.argv) > 1 else "demo_galaxies")
