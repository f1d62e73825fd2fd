#!/usr/bin/python3
"""Sensor models of issue 15 against formulas outside the program:
joint encoders (quantization), bias states, the sensor filter.
Run by `make check-ref` with RIGMAT set."""
import json
import math
import os
import subprocess
import sys

import numpy as np

RIGMAT = os.environ.get("RIGMAT", "build/rigmat")
ROOT = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..")
failures = 0


def run(*args):
    p = subprocess.run([RIGMAT] + list(args), capture_output=True, text=True)
    if p.returncode != 0:
        raise RuntimeError("%s: exit %d: %s" % (" ".join(args), p.returncode, p.stderr))
    return json.loads(p.stdout)


def close(what, got, want, tol):
    global failures
    err = abs(got - want) / max(abs(want), 1e-300)
    if not err <= tol:
        failures += 1
        print("FAIL %s: got %.17g want %.17g (rel %.3g)" % (what, got, want, err))


def model(name):
    return os.path.join(ROOT, "tests", "models", name)


def encoders():
    """Rd = q^2/12, q = 2 pi / counts (uniform quantization error variance, common
    practice: B. Widrow, I. Kollar, Quantization Noise, 2008, ch. 4); in counts the
    step is one count (variance 1/12) and C is counts / (2 pi) per rad."""
    f = model("joint-encoders.yaml")
    d = run("discretize", f, "--rate", "100Hz", "--format", "json")
    lin = run("linearize", f, "--format", "json")
    names = [o["name"] for o in d["outputs"]]
    units = {o["name"]: o["unit"] for o in d["outputs"]}
    rd = np.array(d["Rd"], dtype=float)
    c = np.array(lin["C"], dtype=float)
    states = [s["name"] for s in lin["states"]]
    a, r, j = names.index("a_enc"), names.index("r_enc"), names.index("j_enc")
    q = 2 * math.pi / 4096
    close("angle encoder Rd", rd[a, a], q * q / 12, 1e-14)
    close("relative-angle encoder Rd (counts)", rd[r, r], 1.0 / 12, 1e-14)
    close("hinge encoder Rd (counts)", rd[j, j], 1.0 / 12, 1e-14)
    close("angle encoder C", c[a, states.index("pivot.angle")], 1.0, 1e-15)
    close("relative-angle encoder C", c[r, states.index("elbow.angle")], 1000 / (2 * math.pi),
          1e-14)
    close("hinge encoder C", c[j, states.index("elbow.angle")], 2500 / (2 * math.pi), 1e-14)
    if units["a_enc"] != "rad" or units["r_enc"] != "counts" or units["j_enc"] != "counts":
        global failures
        failures += 1
        print("FAIL encoder units: %s" % units)


def main():
    encoders()
    if failures:
        print("test_sensors: %d failure(s)" % failures)
        sys.exit(1)
    print("test_sensors: ok")


main()
