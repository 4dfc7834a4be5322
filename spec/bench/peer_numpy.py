"""Peer for the benchmark on Debian's python3-numpy / python3-scipy.  Times
only its own work (process CPU time, like the Lua side's os.clock) and
prints one line "time SECONDS check VALUE".  Not part of the module.

    peer_numpy.py interp KNOTS.bin POINTS.bin   numpy.interp
    peer_numpy.py brentq PARAMS.bin OUT.bin     scipy.optimize.brentq per point
"""
import math
import sys
import time

import numpy as np


def fingerprint(y):
    # every 97th value summed in order, as the other sides do
    s = 0.0
    for v in y[::97].tolist():
        s += v
    return s


def interp(knots_path, points_path):
    k = np.fromfile(knots_path, dtype="<f8")
    xp, fp = k[: k.size // 2], k[k.size // 2:]
    x = np.fromfile(points_path, dtype="<f8")
    t = time.process_time()
    y = np.interp(x, xp, fp)
    t = time.process_time() - t
    print("time %.9f check %.17g" % (t, fingerprint(y)))


def brentq(params_path, out_path):
    from scipy.optimize import brentq as root
    p = np.fromfile(params_path, dtype="<f8")
    r, i_s, nvt, xtol = p[:4].tolist()
    sources = p[4:].tolist()
    expm1 = math.expm1

    def kcl(v, e):
        return i_s * expm1(v / nvt) - (e - v) / r

    cur = [0.0] * len(sources)
    t = time.process_time()
    for k, e in enumerate(sources):
        v = root(kcl, 0.0, e, args=(e,), xtol=xtol, rtol=4 * np.finfo(float).eps)
        cur[k] = (e - v) / r
    t = time.process_time() - t
    out = np.array(cur)
    out.astype("<f8").tofile(out_path)
    print("time %.9f check %.17g" % (t, fingerprint(out)))


if __name__ == "__main__":
    if len(sys.argv) == 4 and sys.argv[1] == "interp":
        interp(sys.argv[2], sys.argv[3])
    elif len(sys.argv) == 4 and sys.argv[1] == "brentq":
        brentq(sys.argv[2], sys.argv[3])
    else:
        sys.exit("usage: peer_numpy.py interp KNOTS POINTS | brentq PARAMS OUT")
