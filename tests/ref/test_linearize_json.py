"""Reference checks of `rigmat linearize --format json` on every example.

Independent of the C code: the order hash is recomputed here from the names
and units the JSON lists (FNV-1a 64-bit, offset basis 0xcbf29ce484222325,
prime 0x100000001b3: G. Fowler, L. C. Noll, K.-P. Vo, the FNV hash, from
memory), the member list is README.md's ("JSON output"), the matrix shapes follow
the signal lists, a coordinate's row of A is the unit row of its rate
(x' = rate, exactly), the equilibrium is consistent (is_steady when residual <=
1e-10), and for the demo the sign of the first
non-zero response of the travel to +drive is +, as README.md's worked sign
example ("Signs and frames") requires (numpy matrix powers, threshold relative to the terms).

Usage: RIGMAT=build/rigmat /usr/bin/python3 tests/ref/test_linearize_json.py
"""
import glob
import json
import os
import subprocess
import sys

import numpy as np

RIGMAT = os.environ.get("RIGMAT", "build/rigmat")
HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))
KEYS = ["rigmat", "model", "kind", "order_hash", "states", "inputs", "outputs", "A", "B", "C",
        "D", "operating_point", "equilibrium"]


def fnv(j):
    h = 0xcbf29ce484222325
    data = b""
    for g, group in enumerate(("states", "inputs", "outputs")):
        if g:
            data += b"|"
        for s in j[group]:
            data += s["name"].encode() + b"\t" + s["unit"].encode() + b"\n"
    for c in data:
        h ^= c
        h = (h * 0x100000001b3) % (1 << 64)
    return "%016x" % h


def mat(rows, r, c):
    a = np.array(rows, dtype=float)
    return a.reshape(r, c)


def first_sign(A, b, row):
    v = row.copy()
    for _ in range(len(row)):
        terms = v * b
        if np.abs(terms).sum() > 0 and abs(terms.sum()) > 1e-11 * np.abs(terms).sum():
            return np.sign(terms.sum())
        v = v @ A
    return 0.0


def main():
    failures = 0
    files = sorted(glob.glob(os.path.join(ROOT, "examples", "*.yaml")))
    for f in files:
        p = subprocess.run([RIGMAT, "linearize", f, "--format", "json"], capture_output=True,
                           text=True)
        name = os.path.basename(f)
        if p.returncode != 0:
            print("FAIL %s: exit %d: %s" % (name, p.returncode, p.stderr.strip()))
            failures += 1
            continue
        j = json.loads(p.stdout)
        nx, nu, ny = len(j["states"]), len(j["inputs"]), len(j["outputs"])
        problems = []
        if list(j.keys()) != KEYS:
            problems.append("members %s" % list(j.keys()))
        if j["kind"] != "continuous":
            problems.append("kind %s" % j["kind"])
        if j["order_hash"] != fnv(j):
            problems.append("order hash %s, recomputed %s" % (j["order_hash"], fnv(j)))
        A, B = mat(j["A"], nx, nx), mat(j["B"], nx, nu)
        C, D = mat(j["C"], ny, nx), mat(j["D"], ny, nu)
        names = [s["name"] for s in j["states"]]
        for i, n in enumerate(names):
            for suffix, rate in ((".position", ".velocity"), (".angle", ".rate")):
                if n.endswith(suffix) and n[: -len(suffix)] + rate in names:
                    want = np.zeros(nx)
                    want[names.index(n[: -len(suffix)] + rate)] = 1.0
                    if not np.array_equal(A[i], want) or np.any(B[i] != 0):
                        problems.append("row %s is not its rate" % n)
        op, eq = j["operating_point"], j["equilibrium"]
        if len(op["x"]) != nx or len(op["u"]) != nu or len(op["y"]) != ny:
            problems.append("operating point sizes")
        if len(eq["f0"]) != nx or (eq["residual"] <= 1e-10) != eq["is_steady"]:
            problems.append("equilibrium")
        if name == "balancer.yaml":
            row = np.zeros(nx)
            row[names.index("travel.position")] = 1.0
            k = [s["name"] for s in j["inputs"]].index("drive")
            if first_sign(A, B[:, k], row) != 1.0:
                problems.append("+drive does not move the travel toward +x first")
        if problems:
            failures += 1
            print("FAIL %s: %s" % (name, "; ".join(problems)))
        else:
            print("ok   %s (%d states, %d inputs, %d outputs, hash %s)" % (name, nx, nu, ny,
                                                                          j["order_hash"]))
    if not files:
        print("FAIL no examples found")
        failures += 1
    print("linearize json reference: %s" % ("all passed" if failures == 0 else
                                            "%d FAILED" % failures))
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
