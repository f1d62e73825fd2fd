"""Reference checks of `rigmat sweep`.

- Every good point equals the single `rigmat linearize --set ...` run (and,
  with --rate, `rigmat discretize --rate ... --set ...`) with the overrides
  the point lists, exactly: zero difference in every matrix and in the
  operating point (numpy array_equal), in the JSON and in the npy arrays.
- The npy files follow NumPy's format version 1.0 (NumPy documentation,
  numpy.lib.format: magic "\\x93NUMPY", version 1.0, little-endian 16-bit
  header length, header padded so the data starts at a multiple of 64
  bytes) and load with numpy.load.
- Thread counts 1, 2 and 4 give byte-identical outputs (JSON and npy).
- An operating-point axis (the fast path: the model loaded once per
  thread, each point's value written in place) gives the same bytes as
  the single runs too, with a trim at every point; a point beyond an
  input's limit carries the single run's diagnostic as its reason.
- A point whose trim has no solution is reported, and the single run
  of the same values fails too (exit 3).
- The numpy export holds the good points' matrices (p<i>_A, ...) equal
  to the JSON's, the grid and the ok flags.
- Points beyond a duty input's limit of +-1 are reported (ok false, a
  reason), skipped (NaN in the npy arrays) and counted in a warning; exit
  0 while one point succeeds, 3 when none does, 2 on a malformed --vary.

Usage: RIGMAT=build/rigmat /usr/bin/python3 tests/ref/test_sweep.py
"""
import json
import os
import shutil
import subprocess
import sys
import tempfile

import numpy as np

RIGMAT = os.environ.get("RIGMAT", "build/rigmat")
HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))
EX = os.path.join(ROOT, "examples")
fails = 0


def check(cond, what):
    global fails
    if not cond:
        fails += 1
        print("FAIL:", what)


def run(args, want=0):
    p = subprocess.run([RIGMAT] + args, capture_output=True)
    check(p.returncode == want, "%s: exit %d, wanted %d (%s)" % (" ".join(args), p.returncode,
                                                                want, p.stderr.decode()[:300]))
    return p


def arr(x):
    return np.array(x, dtype=float)


def same(a, b):
    a, b = arr(a), arr(b)
    return a.size == b.size and np.array_equal(a.reshape(-1), b.reshape(-1))


def single(model, sets, rate, want=0):
    args = ["linearize", model] if rate is None else ["discretize", model, "--rate", rate]
    for s in sets:
        args += ["--set", s]
    out = run(args + ["--format", "json"], want).stdout
    return json.loads(out) if want == 0 else out


def read_npy_dir(d):
    out = {}
    for name in sorted(os.listdir(d)):
        with open(os.path.join(d, name), "rb") as f:
            out[name] = f.read()
    return out


def check_npy_header(raw, name):
    check(raw[:6] == b"\x93NUMPY" and raw[6:8] == b"\x01\x00", name + ": magic and version 1.0")
    hlen = raw[8] | (raw[9] << 8)
    check((10 + hlen) % 64 == 0, name + ": data aligned to 64 bytes")
    head = raw[10:10 + hlen].decode("latin1")
    check(head.endswith("\n") and "'descr': '<f8'" in head and "'fortran_order': False" in head,
          name + ": header " + head.strip())


def sweep_case(model, vary, rate, tmp, common=()):
    common = list(common)
    base = ["sweep", model] + sum([["--vary", v] for v in vary], [])
    base += sum([["--set", c] for c in common], [])
    if rate is not None:
        base += ["--rate", rate]
    outs = [run(base + ["--threads", str(t)]).stdout for t in (1, 2, 4)]
    check(outs[0] == outs[1] == outs[2], "%s: JSON differs between 1, 2 and 4 threads" % model)
    dirs = []
    for t in (1, 4):
        d = os.path.join(tmp, "npy%d" % t)
        run(base + ["--threads", str(t), "--format", "npy", "-o", d])
        dirs.append(read_npy_dir(d))
    check(dirs[0] == dirs[1], "%s: npy files differ between 1 and 4 threads" % model)
    for name, raw in dirs[0].items():
        if name.endswith(".npy"):
            check_npy_header(raw, name)
    d = os.path.join(tmp, "npy1")
    j = json.loads(outs[0])
    idx = json.load(open(os.path.join(d, "index.json")))
    ok = np.load(os.path.join(d, "ok.npy"))
    grid = np.load(os.path.join(d, "grid.npy"))
    check(idx["order_hash"] == j["order_hash"], "index.json order hash")
    check(len(j["points"]) == idx["points"] == ok.shape[0], "point counts")
    cont = ["A", "B", "C", "D"]
    disc = [("Ad", "Ad"), ("Bd", "Bd"), ("Gd", "Gd"), ("Cd", "Cd"), ("Dd", "Dd"), ("Ed", "Ed")]
    npy = {k: np.load(os.path.join(d, k + ".npy")) for k in
           cont + ["x0", "u0", "y0"] + ([a for a, _ in disc] if rate else [])}
    failed = {f["index"]: f["reason"] for f in idx["failed"]}
    good = 0
    for p in j["points"]:
        i = p["index"]
        check(same(p["values"], grid[i]), "point %d: grid values" % i)
        check(bool(ok[i]) == p["ok"], "point %d: ok array" % i)
        if not p["ok"]:
            check(failed.get(i) == p["reason"] and p["reason"], "point %d: reason listed" % i)
            check(np.all(np.isnan(npy["A"][i])), "point %d: failed point is NaN in A.npy" % i)
            continue
        good += 1
        ref = single(model, common + p["sets"], None)
        for k in cont:
            check(same(p[k], ref[k]), "point %d: %s differs from linearize" % (i, k))
            check(same(npy[k][i], ref[k]), "point %d: %s.npy differs from linearize" % (i, k))
        for k, n in (("x", "x0"), ("u", "u0"), ("y", "y0")):
            check(same(p["operating_point"][k], ref["operating_point"][k]),
                  "point %d: operating point %s" % (i, k))
            check(same(npy[n][i], ref["operating_point"][k]), "point %d: %s.npy" % (i, n))
        if rate is not None:
            dref = single(model, common + p["sets"], rate)
            for k, rk in disc:
                check(same(p[k], dref[rk]), "point %d: %s differs from discretize" % (i, k))
                check(same(npy[k][i], dref[rk]), "point %d: %s.npy differs" % (i, k))
    return j, good


def main():
    tmp = tempfile.mkdtemp(prefix="rigmat-sweep-")
    try:
        # trim at every point (solve: [drive]), two axes, sampled
        j, good = sweep_case(os.path.join(EX, "pendulum-motor.yaml"),
                             ["shoulder=10deg:40deg:4", "bodies.arm.mass=0.1kg:0.3kg:3"],
                             "200Hz", tmp)
        check(good == 12 and j["failed"] == 0, "pendulum-motor: 12 good points")
        # the fast path (the axis an operating-point value, the model
        # loaded once per thread): a trim at every point, sampled
        shutil.rmtree(os.path.join(tmp, "npy1"))
        shutil.rmtree(os.path.join(tmp, "npy4"))
        jf, goodf = sweep_case(os.path.join(EX, "pendulum-motor.yaml"),
                               ["shoulder=10deg:40deg:5"], "200Hz", tmp)
        check(goodf == 5 and jf["failed"] == 0, "pendulum-motor fast path: 5 good points")
        # the same grid values: the last is TO exactly, in SI
        check(j["grid"]["axes"][0]["values"][-1] == np.deg2rad(40.0) or
              abs(j["grid"]["axes"][0]["values"][-1] - np.deg2rad(40.0)) < 1e-16,
              "grid ends at TO")
        # duty beyond +-1 on two of four points
        shutil.rmtree(os.path.join(tmp, "npy1"))
        shutil.rmtree(os.path.join(tmp, "npy4"))
        bal = os.path.join(EX, "balancer.yaml")
        j, good = sweep_case(bal, ["drive=-1.5:1.5:4"], None, tmp)
        check(good == 2 and j["failed"] == 2, "balancer: 2 good, 2 failed points")
        check(all("outside its limit" in p["reason"] for p in j["points"] if not p["ok"]),
              "balancer: the reason names the input limit")
        # the fast path (an operating-point axis) refuses the point with the
        # loader's own message: the single run's diagnostic, word for word
        for q in j["points"]:
            if not q["ok"]:
                err = run(["linearize", bal, "--set"] + q["sets"], 1).stderr.decode()
                msg = err.split("error: ", 1)[1].split("\n", 1)[0] if "error: " in err else "?"
                check(q["reason"] == "the model is refused: the operating point: " + msg,
                      "balancer: reason %r is the loader's %r" % (q["reason"], msg))
        # the numpy module holds the good points' matrices, the grid and ok
        mod = {}
        exec(run(["sweep", bal, "--vary", "drive=-1.5:1.5:4", "--format", "numpy"]).stdout, mod)
        check(same(mod["ok"], [0, 1, 1, 0]) and mod["grid"].shape == (4, 1),
              "numpy export: ok and grid")
        for q in j["points"]:
            for k in ("A", "B", "C", "D"):
                name = "p%d_%s" % (q["index"], k)
                check((name in mod) == q["ok"], "numpy export: %s present iff ok" % name)
                if q["ok"]:
                    check(same(mod[name], q[k]), "numpy export: %s equals the JSON" % name)
        p = run(["sweep", bal, "--vary", "drive=-1.5:1.5:4"])
        check(b"warning: 2 of 4 points failed" in p.stderr, "warning names the failed count")
        # a trim with no solution: the held angle under a drive whose torque
        # no angle of the arm can balance; the single run fails the same way
        shutil.rmtree(os.path.join(tmp, "npy1"))
        shutil.rmtree(os.path.join(tmp, "npy4"))
        pm = os.path.join(EX, "pendulum-motor.yaml")
        solve = ["operating_point.solve=[shoulder]"]
        j, good = sweep_case(pm, ["drive=0V:100V:3"], None, tmp, solve)
        check(good == 1 and j["failed"] == 2, "pendulum-motor: trim fails at 50 V and 100 V")
        for q in j["points"]:
            if not q["ok"]:
                check(q["reason"].startswith("trim did not converge"), "trim failure reason")
                single(pm, solve + q["sets"], None, 3)
        # exit codes
        run(["sweep", bal, "--vary", "drive=2:3:2"], 3)
        run(["sweep", bal, "--vary", "drive=0:1"], 2)
        run(["sweep", bal, "--vary", "nosuch=0:1:2"], 2)
        run(["sweep", bal, "--vary", "drive=0:1:2", "--threads", "0"], 2)
        run(["sweep", bal, "--vary", "drive=0:1:2", "--format", "npy"], 2)
        run(["sweep", bal, "--vary", "drive=0:1:1001", "--vary", "tilt=0deg:1deg:1001"], 2)
        run(["sweep", bal], 2)
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    if fails:
        print("test_sweep: %d failure(s)" % fails)
        sys.exit(1)
    print("test_sweep: ok")


main()
