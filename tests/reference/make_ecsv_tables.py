#!/usr/bin/env python3
"""Writes galaxy tables with astropy's own ECSV writer, and the values astropy converts them to.

Output: tests/reference/fixtures/ecsv/*.ecsv (written by astropy.table.Table.write, format
"ascii.ecsv") and tests/reference/fixtures/ecsv/expected.json (radii in kpc and velocities in
km/s, converted with astropy.units). The Rust test tests/ecsv_astropy.rs reads each table with
Caldera and compares. CI re-runs this script. The galaxies are invented.
"""

import json
import pathlib

import numpy as np
from astropy import units as u
from astropy.table import Table

OUT = pathlib.Path(__file__).parent / "fixtures" / "ecsv"


def make(name, radius, unit_r, v_obs, v_err, gas, disk, bulge, unit_v, meta, delimiter=None):
    t = Table()
    t["radius"] = np.asarray(radius) * unit_r
    t["v_obs"] = np.asarray(v_obs) * unit_v
    t["e_v_obs"] = np.asarray(v_err) * unit_v
    t["v_gas"] = np.asarray(gas) * unit_v
    t["v_disk"] = np.asarray(disk) * unit_v
    if bulge is not None:
        t["v_bulge"] = np.asarray(bulge) * unit_v
    t.meta.update(meta)
    path = OUT / f"{name}.ecsv"
    kwargs = {"format": "ascii.ecsv", "overwrite": True}
    if delimiter:
        kwargs["delimiter"] = delimiter
    t.write(path, **kwargs)
    distance = meta.get("distance_mpc")
    if unit_r.physical_type == "angle":
        radius_kpc = (t["radius"].to(u.rad).value * distance * u.Mpc).to(u.kpc).value
    else:
        radius_kpc = t["radius"].to(u.kpc).value
    expected = {
        "file": path.name,
        "name": meta.get("name", name),
        "radius_kpc": list(radius_kpc),
        "v_obs_kms": list(t["v_obs"].to(u.km / u.s).value),
        "v_err_kms": list(t["e_v_obs"].to(u.km / u.s).value),
        "v_gas_kms": list(t["v_gas"].to(u.km / u.s).value),
        "v_disk_kms": list(t["v_disk"].to(u.km / u.s).value),
        "v_bulge_kms": None if bulge is None else list(t["v_bulge"].to(u.km / u.s).value),
        "distance_mpc": distance,
        "inclination_deg": meta.get("inclination_deg"),
    }
    return expected


def main():
    OUT.mkdir(parents=True, exist_ok=True)
    cases = [
        make("kiln_dwarf_kpc", [0.3, 0.6, 1.0, 1.6, 2.4], u.kpc, [14, 22, 29, 34, 37], [2, 2, 2.5, 3, 3],
             [4, 6, 8, 9, 10], [8, 11, 12, 12, 11], None, u.km / u.s,
             {"name": "Kiln Dwarf 7", "distance_mpc": 6.5, "inclination_deg": 48.0, "age_gyr": 10.0,
              "notes": "invented test galaxy"}),
        make("kiln_spiral_pc_ms", [500, 1500, 3000, 6000, 12000], u.pc,
             [90e3, 150e3, 185e3, 200e3, 198e3], [6e3, 5e3, 5e3, 6e3, 8e3],
             [10e3, 25e3, 35e3, 40e3, 42e3], [70e3, 110e3, 120e3, 105e3, 80e3],
             [90e3, 80e3, 60e3, 45e3, 32e3], u.m / u.s,
             {"name": "Kiln Spiral 2", "distance_mpc": 22.0, "inclination_deg": 62.0}),
        make("kiln_lsb_arcsec", [10, 20, 40, 60, 90], u.arcsec, [18, 30, 45, 52, 56], [3, 3, 3, 4, 5],
             [6, 10, 14, 16, 17], [7, 10, 11, 10, 9], None, u.km / u.s,
             {"name": "Kiln LSB 4", "distance_mpc": 15.0, "inclination_deg": 35.0}, delimiter=","),
    ]
    (OUT / "expected.json").write_text(json.dumps(cases, indent=1) + "\n")
    print(f"wrote {len(cases)} astropy ECSV tables to {OUT}")


if __name__ == "__main__":
    main()
