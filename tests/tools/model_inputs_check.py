#!/usr/bin/python3
"""Read steamloft's model-input and run files with xarray (python3-xarray,
python3-dask), independently of steamloft's code.

    /usr/bin/python3 tests/tools/model_inputs_check.py RUN_A.nc RUN_B.nc EMISSION.nc WANT_KG

Checks: xarray.open_dataset decodes each run file's time axis (CF "days since"
the event) and sees longitude as a scalar coordinate of the profile;
open_mfdataset joins the two runs along a new "run" dimension; the CF emission
file, integrated over cell areas (from lat_bnds/lon_bnds on the sphere of
radius 6371008.8 m), layer depths (altitude_bnds, km) and the pulse (time_bnds),
gives WANT_KG within 1e-6.  Prints "FAIL - ..." per failed check and exits 1.
"""
import math
import sys

import numpy as np
import xarray as xr

fails = 0


def ok(cond, what):
    global fails
    if not cond:
        fails += 1
        print("FAIL - " + what)


def main():
    a, b, emis, want = sys.argv[1], sys.argv[2], sys.argv[3], float(sys.argv[4])
    for p in (a, b):
        with xr.open_dataset(p) as ds:
            ok(np.issubdtype(ds["time"].dtype, np.datetime64), "%s: time decoded as dates" % p)
            ok("longitude" in ds["vapor_mass"].coords, "%s: longitude is a coordinate of vapor_mass" % p)
            ok("latitude" in ds["vapor_mass"].coords, "%s: latitude is a coordinate of vapor_mass" % p)
    with xr.open_mfdataset([a, b], combine="nested", concat_dim="run") as m:
        ok(m.sizes.get("run") == 2, "open_mfdataset: two runs")
        ok(m["excess_water_mass"].shape[0] == 2, "open_mfdataset: excess_water_mass per run")
    with xr.open_dataset(emis, decode_times=False) as e:
        r = 6371008.8
        lat = np.radians(e["lat_bnds"].values)
        lon = np.radians(e["lon_bnds"].values)
        area = r * r * np.abs(np.sin(lat[:, 1]) - np.sin(lat[:, 0]))[:, None] * \
            np.abs(lon[:, 1] - lon[:, 0])[None, :]
        dz = (e["altitude_bnds"].values[:, 1] - e["altitude_bnds"].values[:, 0]) * 1e3
        tb = e["time_bnds"].values
        dt = (tb[:, 1] - tb[:, 0]) * 86400.0
        tot = 0.0
        for v in ("water_vapour_emission", "ice_emission"):
            q = e[v].values.astype(float)  # (time, altitude, lat, lon)
            tot += float(np.einsum("tzyx,yx,z,t->", q, area, dz, dt))
        ok(abs(tot / want - 1.0) < 1e-6, "emission integrates to %.9g kg, want %.9g" % (tot, want))
        ok(math.isclose(float(e.attrs["mass_check_kg"]), want, rel_tol=1e-9), "mass_check_kg attribute")
    print("model_inputs_check: %d failed" % fails)
    return 1 if fails else 0


if __name__ == "__main__":
    sys.exit(main())
