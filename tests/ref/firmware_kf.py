#!/usr/bin/python3
"""The generated steady-state Kalman filter (`rigmat firmware`, NAME_kf_*)
against a numpy filter, step for step.  Run by tests/firmware.sh:

    firmware_kf.py RIGMAT FW_HOST MODEL RATE [--set PATH=VALUE ...]

FW_HOST is tests/fw_host.c built with the double form of the model's
generated code.  The numpy filter is the filter form of the steady-state
Kalman filter written out from the textbook (B. D. O. Anderson, J. B.
Moore, "Optimal Filtering", 1979, sec. 5.5), on deviations from the
operating point, with the matrices of `rigmat discretize` and `rigmat gains`
(--format json):
    e   = y - (y0 + Cd (x- - x0) + Dd (u - u0))
    x+  = x- + M e
    x-' = x0 + fd + Ad (x+ - x0) + Bd (u - u0) + (Kp - Ad M) e
(the last term is zero without a cross-covariance S).  The inputs and
readings are 60 seeded random steps around the operating point.  Each
estimate agrees to 1e-12 of the size of the numbers that form it
(|x0| + |x - x0| per state, over the run): the C code sums in another
order, so it is equal up to rounding."""
import json
import os
import subprocess
import sys
import tempfile

import numpy as np


def main():
    rigmat, host, model, rate = sys.argv[1:5]
    sets = sys.argv[5:]

    def run(*args):
        p = subprocess.run([rigmat, *args, model, "--rate", rate, "--format", "json", *sets],
                           capture_output=True, text=True)
        if p.returncode != 0:
            sys.exit("firmware_kf: rigmat %s failed: %s" % (args[0], p.stderr))
        return json.loads(p.stdout)

    d = run("discretize")
    g = run("gains")
    A, B, C, D = (np.array(d[k], dtype=float) for k in ("Ad", "Bd", "Cd", "Dd"))
    fd = np.array(d["fd"], dtype=float)
    M = np.array(g["kalman"]["gain"], dtype=float)
    Kp = np.array(g["kalman"]["predictor_gain"], dtype=float)
    op = g["operating_point"]
    x0, u0, y0 = (np.array(op[k], dtype=float) for k in ("x", "u", "y"))
    nx, ny = C.shape[1], C.shape[0]
    nc = B.shape[1] if B.size else 0
    u0c = u0[:nc]
    if B.size == 0:
        B = np.zeros((nx, 0))
        D = np.zeros((ny, 0))
    cross = Kp - A @ M

    rng = np.random.default_rng(20261202)
    steps = 60
    us = u0c + 0.1 * rng.standard_normal((steps, nc))
    ys = y0 + 0.05 * (1 + np.abs(y0)) * rng.standard_normal((steps, ny))

    with tempfile.TemporaryDirectory() as tmp:
        fin, fout = os.path.join(tmp, "in.txt"), os.path.join(tmp, "out.txt")
        with open(fin, "w") as f:
            for k in range(steps):
                f.write(" ".join("%.17g" % v for v in list(us[k]) + list(ys[k])) + "\n")
        p = subprocess.run([host, "kf", fin, fout], capture_output=True, text=True)
        if p.returncode != 0:
            sys.exit("firmware_kf: fw_host kf failed: %s" % p.stderr)
        got = np.loadtxt(fout, ndmin=2)

    ref = []
    x = x0.copy()
    for k in range(steps):
        e = ys[k] - (y0 + C @ (x - x0) + D @ (us[k] - u0c))
        xp = x + M @ e
        ref.append(xp)
        x = x0 + fd + A @ (xp - x0) + B @ (us[k] - u0c) + cross @ e
        ref.append(x)
    ref = np.array(ref)
    if got.shape != ref.shape:
        sys.exit("firmware_kf: %s: %s estimates from the C filter, %s expected"
                 % (model, got.shape, ref.shape))
    scale = np.abs(x0) + np.max(np.abs(ref - x0), axis=0)
    scale[scale == 0] = 1.0
    err = np.max(np.abs(got - ref) / scale)
    ok = err <= 1e-12
    print("firmware_kf %s%s: %d steps, largest relative difference %.3g (tolerance 1e-12): %s"
          % (os.path.basename(model), " " + " ".join(sets) if sets else "", steps, err,
             "ok" if ok else "MISMATCH"))
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
