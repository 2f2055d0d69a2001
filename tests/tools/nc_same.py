#!/usr/bin/python3
"""Prove that two netCDF files hold the same content, whatever their format.

Usage: nc_same.py A.nc B.nc

Reads both with python3-netcdf4 (the Debian package; it shares no code with
steamloft) and compares, independently of the order the formats list things
in: the dimensions (name, length, unlimited or not), the global attributes
(every one but `history`, which holds the time of writing), and every
variable: its type, dimensions, attributes (names, types and values) and
data.  Data are compared bit for bit as stored (masked values unmasked, so a
_FillValue compares as the fill value); a difference of one bit fails.
Prints one line per difference and exits 1, or 0 with a summary line.
"""
import sys

import netCDF4
import numpy as np


def attrs(obj, skip=()):
    out = {}
    for name in obj.ncattrs():
        if name in skip:
            continue
        value = obj.getncattr(name)
        if isinstance(value, np.ndarray):
            value = (value.dtype.str, value.tobytes())
        elif isinstance(value, (np.generic, float, int)):
            value = (np.asarray(value).dtype.str, np.asarray(value).tobytes())
        out[name] = value
    return out


def main(a_path, b_path):
    bad = []
    with netCDF4.Dataset(a_path) as a, netCDF4.Dataset(b_path) as b:
        a.set_auto_mask(False)
        b.set_auto_mask(False)
        da = {n: (len(d), d.isunlimited()) for n, d in a.dimensions.items()}
        db = {n: (len(d), d.isunlimited()) for n, d in b.dimensions.items()}
        if da != db:
            bad.append("dimensions differ: %r vs %r" % (da, db))
        ga, gb = attrs(a, ("history",)), attrs(b, ("history",))
        for name in sorted(set(ga) | set(gb)):
            if ga.get(name) != gb.get(name):
                bad.append("global attribute %s: %r vs %r" % (name, ga.get(name), gb.get(name)))
        va, vb = set(a.variables), set(b.variables)
        for name in sorted(va ^ vb):
            bad.append("variable %s only in %s" % (name, a_path if name in va else b_path))
        n_values = 0
        for name in sorted(va & vb):
            x, y = a.variables[name], b.variables[name]
            if x.dtype != y.dtype or x.dimensions != y.dimensions:
                bad.append("%s: %s%r vs %s%r" % (name, x.dtype, x.dimensions, y.dtype, y.dimensions))
                continue
            xa, ya = attrs(x), attrs(y)
            for att in sorted(set(xa) | set(ya)):
                if xa.get(att) != ya.get(att):
                    bad.append("%s:%s: %r vs %r" % (name, att, xa.get(att), ya.get(att)))
            xd, yd = np.asarray(x[...]), np.asarray(y[...])
            if xd.shape != yd.shape or xd.tobytes() != yd.tobytes():
                bad.append("%s: data differ" % name)
            n_values += xd.size
    for line in bad:
        print(line)
    if bad:
        return 1
    print("same content: %d dimensions, %d global attributes, %d variables, %d values"
          % (len(da), len(ga), len(va), n_values))
    return 0


if __name__ == "__main__":
    if len(sys.argv) != 3:
        sys.exit(__doc__)
    sys.exit(main(sys.argv[1], sys.argv[2]))
