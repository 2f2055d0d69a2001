#!/usr/bin/python3
"""Independent reader for steamloft netCDF files (python3-netcdf4 from Debian).

    /usr/bin/python3 tests/tools/nc_check.py [-v] [--cf-only] FILE [EXPECT]

(--cf-only: the CF rules alone, lengths in any unit, no mass bookkeeping: for
the model-input files.)

Checks the CF-1.11 structure of FILE without using any steamloft code, then
compares it with EXPECT (optional), a text file with one expectation a line:

    var NAME INDEX VALUE RTOL    element INDEX (flat, C order) of NAME equals VALUE
    sum NAME VALUE RTOL          the sum of NAME equals VALUE
    att VAR|. NAME TEXT...       attribute NAME of VAR ('.' = global) equals TEXT
    has VAR                      variable exists
    hasnot VAR                   variable does not exist
    format FMT                   file format as netCDF4 reports it (NETCDF4_CLASSIC, NETCDF3_CLASSIC)

Prints a "FAIL - ..." line per failed check (with -v also "ok - ..." lines), then
"nc_check: FILE: N checks, M failed", and exits 1 if anything failed.

The CF rules checked (CF-1.11, sections cited; standard names from table
version 83, https://cfconventions.org/standard-names.html):
  2.6   Conventions contains CF-1.11; history, source, references, comment present
  2.5.1 data values finite; an undefined value only as the variable's declared _FillValue
  3.1   units present on every data variable but flag variables; no ppm/ppmv/ppbv where a standard_name is set
  3.5   a flag variable: as many flag_meanings (CF words) as distinct flag_values of its type, no units,
        every stored code a flag value
  3.3   standard_name only from the CF table copy (tests/cf_standard_names_v83.txt), each
        with units convertible to its canonical units
  4.3   a vertical coordinate has positive up/down, units, axis Z
  4.4   time units "<unit> since <date>" and a calendar
  5     coordinate variables strictly monotonic, no _FillValue, no missing values
  7.1   bounds variable exists, shape (n, 2), no units of its own, contiguous edges
        bit-identical, the coordinate value inside its cell
Mass bookkeeping: vapor_mass sums to total_vapor_mass; the mass content
(kg m-2) times the Earth's area equals the band mass.
"""
import math
import os
import re
import sys

import netCDF4
import numpy as np

fails = 0
checks = 0
verbose = False
cf_only = False  # --cf-only: the CF rules alone (files other than run/decay results)


def ok(cond, what):
    global fails, checks
    checks += 1
    if cond:
        if verbose:
            print("ok - " + what)
    else:
        fails += 1
        print("FAIL - " + what)
    return cond


# Standard name -> canonical units, read from the copy of the CF standard name
# table's entries shipped with the tests (tests/cf_standard_names_v83.txt).
def load_standard_names():
    here = os.path.dirname(os.path.abspath(__file__))
    table = {}
    with open(os.path.join(here, "..", "cf_standard_names_v83.txt")) as f:
        for line in f:
            line = line.strip()
            if line and not line.startswith("#"):
                name, units = line.split(" ", 1)
                table[name] = units
    return table


STANDARD = load_standard_names()

# Units as written -> the canonical spelling they convert to (UDUNITS: a
# factor apart at most; plural and singular degree names are the same unit).
CONVERTS_TO = {
    "m": "m", "km": "m", "K": "K", "Pa": "Pa", "hPa": "Pa", "kg m-3": "kg m-3",
    "1": "1", "mol mol-1": "1", "kg kg-1": "1", "kg m-2": "kg m-2", "s-2": "s-2",
    "degrees_north": "degree_north", "degree_north": "degree_north",
    "degrees_east": "degree_east", "degree_east": "degree_east",
    "s": "s", "days": "s", "day": "s",
}


def convertible(units, canonical):
    if canonical == "s" and " since " in units:
        return units.split(" since ")[0] in CONVERTS_TO
    return CONVERTS_TO.get(units) == canonical


EARTH_AREA_M2 = 4.0 * math.pi * 6371008.8 ** 2  # IUGG mean radius (ecosystem/units.h)


def check_cf(ds):
    conv = getattr(ds, "Conventions", "")
    ok("CF-1.11" in conv.split(), "Conventions = '%s' contains CF-1.11" % conv)
    for a in ("title", "history", "source", "references", "comment"):
        v = getattr(ds, a, "")
        ok(isinstance(v, str) and len(v) > 0, "global attribute %s present (text)" % a)
    for name, var in ds.variables.items():
        attrs = var.ncattrs()
        is_bounds = any(getattr(v, "bounds", None) == name for v in ds.variables.values())
        if is_bounds:
            ok("units" not in attrs, "%s: bounds variable carries no units of its own" % name)
            continue
        if "flag_values" in attrs or "flag_meanings" in attrs:
            # A flag variable (CF 3.5): codes with meanings, no units; as many
            # blank-separated meanings as values, the values of the variable's type,
            # distinct, and every stored code one of them.
            fv = np.atleast_1d(var.getncattr("flag_values")) if "flag_values" in attrs else np.array([])
            fm = str(getattr(var, "flag_meanings", "")).split()
            ok(len(fv) > 0 and len(fv) == len(fm), "%s: %d flag_values, %d flag_meanings" % (name, len(fv), len(fm)))
            ok(fv.dtype == var.dtype, "%s: flag_values of the variable's type (%s, %s)" % (name, fv.dtype, var.dtype))
            ok(len(set(fv.tolist())) == len(fv), "%s: distinct flag_values" % name)
            ok(all(re.fullmatch(r"[A-Za-z0-9_.+@-]+", m) for m in fm), "%s: flag_meanings are CF words" % name)
            data = np.atleast_1d(np.ma.filled(var[...], fv[0] if len(fv) else 0))
            ok(set(data.tolist()) <= set(fv.tolist()), "%s: every stored code is a flag value" % name)
            ok("units" not in attrs, "%s: a flag variable carries no units" % name)
            continue
        ok("units" in attrs, "%s has units" % name)
        sn = getattr(var, "standard_name", None)
        units = getattr(var, "units", "")
        if sn is not None:
            ok(sn in STANDARD, "%s: standard_name '%s' is in the CF table copy" % (name, sn))
            if sn in STANDARD:
                ok(convertible(units, STANDARD[sn]),
                   "%s: units '%s' convert to %s, the canonical units of %s" % (name, units, STANDARD[sn], sn))
            ok("ppm" not in units.lower() and "ppb" not in units.lower(),
               "%s: no ppm/ppb units with a standard_name" % name)
        else:
            ok("long_name" in attrs, "%s: long_name where there is no standard_name" % name)
        data = var[:]
        if "_FillValue" in attrs:
            # CF 2.5.1: an undefined value (an empty box, a time that does not
            # exist) is _FillValue; every other value finite, and never NaN.
            fill = float(var.getncattr("_FillValue"))
            raw = np.asarray(np.ma.getdata(data), dtype=float)
            ok(np.isfinite(fill) and np.all(np.isfinite(raw[raw != fill])),
               "%s: finite values, undefined ones as _FillValue" % name)
        else:
            ok(not np.ma.is_masked(data) and np.all(np.isfinite(np.asarray(data))),
               "%s: no missing or non-finite values" % name)
        if sn == "air_temperature":
            ok(getattr(var, "units_metadata", "") == "temperature: on_scale",
               "%s: units_metadata temperature: on_scale" % name)

    # Coordinate variables: 1-D, same name as their dimension.
    for name, var in ds.variables.items():
        if var.dimensions != (name,):
            continue
        vals = np.asarray(var[:], dtype=float)
        ok("_FillValue" not in var.ncattrs(), "%s: coordinate without _FillValue" % name)
        d = np.diff(vals)
        ok(len(vals) < 2 or np.all(d > 0) or np.all(d < 0), "%s: strictly monotonic" % name)
        axis = getattr(var, "axis", None)
        if axis == "Z":
            ok(getattr(var, "positive", "") in ("up", "down"), "%s: positive is up/down" % name)
            ok(getattr(var, "positive", "") == "up", "%s: positive = up (altitude)" % name)
            if cf_only:  # a model input (the emission file): any length unit
                ok(convertible(var.units, "m"), "%s: units convert to m" % name)
            else:
                ok(var.units == "m", "%s: units m" % name)
            ok(var.standard_name == "altitude", "%s: standard_name altitude" % name)
        if axis == "T":
            u = getattr(var, "units", "")
            ok(" since " in u and u.split()[0] == "days", "%s: units '%s' are days since a date" % (name, u))
            ok(getattr(var, "calendar", "") == "standard", "%s: calendar standard" % name)
            netCDF4.num2date(vals, u, getattr(var, "calendar", "standard"))  # parses or raises
            ok(True, "%s: units and calendar parse with cftime" % name)
        if axis == "Y":
            ok(var.units == "degrees_north", "%s: units degrees_north" % name)
            ok(np.all(vals >= -90) and np.all(vals <= 90), "%s: within [-90, 90]" % name)
        b = getattr(var, "bounds", None)
        if b is not None:
            ok(b in ds.variables, "%s: bounds variable %s exists" % (name, b))
            bv = np.asarray(ds.variables[b][:], dtype=float)
            ok(ds.variables[b].dimensions[0] == name and bv.shape == (len(vals), 2),
               "%s: shape (%d, 2), vertex dimension last" % (b, len(vals)))
            ok(np.all(bv[1:, 0] == bv[:-1, 1]), "%s: contiguous cells share bit-identical edges" % b)
            ok(np.all((vals >= bv[:, 0]) & (vals <= bv[:, 1])), "%s: each value inside its cell" % name)
        if axis in ("Z", "Y"):
            ok(b is not None or name == "atm_altitude",
               "%s: has bounds (layers and regions are cells)" % name)


def check_masses(ds):
    v = ds.variables
    if ok("vapor_mass" in v and "total_vapor_mass" in v, "vapor_mass and total_vapor_mass present"):
        s = float(np.sum(np.asarray(v["vapor_mass"][:], dtype=float)))
        t = float(v["total_vapor_mass"][...])
        ok(abs(s - t) <= 1e-12 * max(abs(t), 1e-300),
           "profile sums to total_vapor_mass (%.15g vs %.15g)" % (s, t))
    if "ice_mass" in v and "total_ice_mass" in v:
        s = float(np.sum(np.asarray(v["ice_mass"][:], dtype=float)))
        t = float(v["total_ice_mass"][...])
        ok(abs(s - t) <= 1e-12 * max(abs(t), 1e-300), "ice profile sums to total_ice_mass")
    if "vapor_mass_content" in v:
        m = np.asarray(v["vapor_mass"][:], dtype=float)
        c = np.asarray(v["vapor_mass_content"][:], dtype=float) * EARTH_AREA_M2
        ok(np.allclose(c, m, rtol=1e-12, atol=0), "vapor_mass_content * Earth area = vapor_mass")


def check_expect(ds, path):
    with open(path) as f:
        for raw in f:
            line = raw.strip()
            if not line or line.startswith("#"):
                continue
            w = line.split()
            kind = w[0]
            try:
                if kind == "var":
                    name, idx, val, rtol = w[1], int(w[2]), float(w[3]), float(w[4])
                    got = float(np.asarray(ds.variables[name][:], dtype=float).ravel()[idx])
                    ok(abs(got - val) <= rtol * abs(val) + (0 if val else rtol),
                       "%s[%d] = %.15g, expected %.15g" % (name, idx, got, val))
                elif kind == "sum":
                    name, val, rtol = w[1], float(w[2]), float(w[3])
                    got = float(np.sum(np.asarray(ds.variables[name][:], dtype=float)))
                    ok(abs(got - val) <= rtol * abs(val), "sum(%s) = %.15g, expected %.15g" % (name, got, val))
                elif kind == "att":
                    var, name = w[1], w[2]
                    text = line.split(None, 3)[3] if len(w) > 3 else ""
                    obj = ds if var == "." else ds.variables[var]
                    got = obj.getncattr(name)
                    if isinstance(got, str):
                        ok(got == text, "%s:%s = '%s', expected '%s'" % (var, name, got, text))
                    else:
                        val = float(np.asarray(got).ravel()[0])
                        ok(val == float(text), "%s:%s = %r, expected %s" % (var, name, val, text))
                elif kind == "has":
                    ok(w[1] in ds.variables, "variable %s present" % w[1])
                elif kind == "hasnot":
                    ok(w[1] not in ds.variables, "variable %s absent" % w[1])
                elif kind == "format":
                    ok(ds.data_model == w[1], "format %s (expected %s)" % (ds.data_model, w[1]))
                else:
                    ok(False, "unknown expectation '%s'" % line)
            except (KeyError, AttributeError, IndexError, ValueError) as exc:
                ok(False, "%s: %s" % (line, exc))


def main():
    global verbose, cf_only
    args = sys.argv[1:]
    while args and args[0] in ("-v", "--cf-only"):
        if args[0] == "-v":
            verbose = True
        else:
            cf_only = True
        args = args[1:]
    if len(args) not in (1, 2):
        print("usage: nc_check.py [-v] [--cf-only] FILE [EXPECT]", file=sys.stderr)
        return 64
    with netCDF4.Dataset(args[0]) as ds:
        ds.set_auto_mask(True)
        check_cf(ds)
        if not cf_only:
            check_masses(ds)
        if len(args) == 2:
            check_expect(ds, args[1])
    print("nc_check: %s: %d checks, %d failed" % (args[0], checks, fails))
    return 1 if fails else 0


if __name__ == "__main__":
    sys.exit(main())
