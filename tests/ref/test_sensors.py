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


def fail(msg):
    global failures
    failures += 1
    print("FAIL " + msg)


def biases():
    """Bias states: layout, C, exact Qd entries, and a steady-state Kalman filter
    that finds a constant gyro bias."""
    f = model("gyro-bias.yaml")
    deg = math.pi / 180
    T = 0.01
    d = run("discretize", f, "--rate", "100Hz", "--delay", "1", "--format", "json")
    states = [x["name"] for x in d["states"]]
    # the layout: biases last, after the mechanical states, before the delay state
    if states != ["pivot.angle", "pivot.rate", "gyro.bias", "incl.bias", "twist.delayed1"]:
        fail("bias layout: %s" % states)
    if [x["name"] for x in d["delay_states"]] != ["twist.delayed1"]:
        fail("delay states after the biases: %s" % d["delay_states"])
    qd = np.array(d["Qd"], dtype=float)
    g, i = states.index("gyro.bias"), states.index("incl.bias")
    # R. G. Brown, P. Y. C. Hwang, Introduction to Random Signals and Applied Kalman
    # Filtering, 4th ed. 2012, sec. 3.9 (Wiener process): Qd = q T, q = N^2
    q = (0.001 * deg) ** 2
    close("random-walk bias Qd = q T", qd[g, g], q * T, 1e-12)
    # the same, first-order Gauss-Markov: Qd = S^2 (1 - e^{-2T/tau})
    S, tau = 0.3 * deg, 20.0
    close("Gauss-Markov bias Qd = S^2 (1 - e^-2T/tau)", qd[i, i],
          S * S * -math.expm1(-2 * T / tau), 1e-12)
    if qd[g, i] != 0.0 or qd[g, 0] != 0.0:
        fail("bias noise is independent of the plant's: Qd %s" % qd[g])
    lin = run("linearize", f, "--format", "json")
    c = np.array(lin["C"], dtype=float)
    a = np.array(lin["A"], dtype=float)
    outs = [o["name"] for o in lin["outputs"]]
    # the bias adds to the reading times gain (2 for the gyro)
    close("gyro bias in C (gain)", c[outs.index("gyro"), g], 2.0, 1e-15)
    close("inclinometer bias in C", c[outs.index("incl"), i], 1.0, 1e-15)
    close("Gauss-Markov pole -1/tau", a[i, i], -1 / tau, 1e-15)
    if a[g, g] != 0.0:
        fail("random-walk bias has no pole: A %g" % a[g, g])
    check = run("check", f, "--rate", "100Hz", "--format", "json")
    b = {x["name"]: x for x in check["biases"]}
    # sd after t: N sqrt(t), S sqrt(1 - e^{-2t/tau}) (Brown, Hwang 2012, as above)
    close("check: random walk sd after a minute", b["gyro"]["sd_after_minute"],
          0.001 * deg * math.sqrt(60), 1e-14)
    close("check: Gauss-Markov sd after a sample", b["incl"]["sd_after_sample"],
          S * math.sqrt(-math.expm1(-2 * T / tau)), 1e-14)

    # A steady-state Kalman filter (src/study/gains.h, filter form) on the sampled
    # model: the true gyro bias is a constant 0.5 deg/s (a random walk that happened
    # not to move); noise-free readings, so the estimation error follows the
    # estimator poles alone: after 20 of the slowest estimator's time constants
    # -1/ln|p| the bias error must be below 1e-6 of the bias (e^-20 = 2e-9, with
    # room for the transient of a non-normal error matrix).
    k = run("gains", f, "--rate", "100Hz", "--format", "json")
    dz = run("discretize", f, "--rate", "100Hz", "--format", "json")
    Ad = np.array(dz["Ad"], dtype=float)
    Cd = np.array(dz["Cd"], dtype=float)
    M = np.array(k["kalman"]["gain"], dtype=float)
    Kp = np.array(k["kalman"]["predictor_gain"], dtype=float)
    poles = [abs(complex(p[0], p[1])) for p in k["kalman"]["poles"]]
    rho = max(abs(np.linalg.eigvals(Ad - Kp @ Cd)))
    close("estimator poles reported = eig(Ad - Kp Cd)", max(poles), rho, 1e-9)
    steps = int(math.ceil(20 / -math.log(rho)))
    b0 = 0.5 * deg
    x = np.zeros(len(Ad))
    x[0] = 2 * deg  # the rod starts deflected; the filter does not know it
    x[g] = b0
    xm = np.zeros(len(Ad))
    for _ in range(steps):
        y = Cd @ x
        e = y - Cd @ xm
        xp = xm + M @ e
        x = Ad @ x
        xm = Ad @ xp + (Kp - Ad @ M) @ e
    err = abs(xp[g] - b0) / b0
    print("gyro bias estimate after %d steps (%.1f s): relative error %.3g; slowest "
          "estimator pole %.6f" % (steps, steps * T, err, rho))
    if not err < 1e-6:
        fail("Kalman filter bias error %.3g after %d steps" % (err, steps))


def filters():
    """A first-order sensor filter: the filtered accelerometer's response from the
    force equals the raw one's times 1/(1 + s/(2 pi F)) (the definition of a
    first-order low-pass, common practice), both computed with numpy from
    linearize's A, B, C, D; its density is process noise of the filter state
    and only its `noise` stays in Rd."""
    # kept out of tests/models: an accelerometer's response has a multiple zero at
    # the origin (s^2 and more), which the channel-zero comparison of
    # test_modes_examples.py cannot resolve in double precision
    f = os.path.join(ROOT, "tests", "sensors", "filtered-accelerometer.yaml")
    F = 20.0
    lin = run("linearize", f, "--format", "json")
    A = np.array(lin["A"], dtype=float)
    B = np.array(lin["B"], dtype=float)
    C = np.array(lin["C"], dtype=float)
    D = np.array(lin["D"], dtype=float)
    outs = [o["name"] for o in lin["outputs"]]
    ins = [x["name"] for x in lin["inputs"]]
    r, fl, u = outs.index("raw"), outs.index("filt"), ins.index("push")
    n = A.shape[0]
    got, want = [], []
    for hz in (0.01, 0.3, 1.0, 1.6, 5.0, 20.0, 80.0, 400.0):
        s = 2j * math.pi * hz
        G = C @ np.linalg.solve(s * np.eye(n) - A, B) + D
        got.append(G[fl, u])
        want.append(G[r, u] / (1 + s / (2 * math.pi * F)))
    # relative to the largest response of the sweep: an accelerometer's response
    # vanishes toward DC (1e-9 at 0.01 Hz), where only cancellation remains
    peak = max(abs(w) for w in want)
    worst = max(abs(g - w) for g, w in zip(got, want)) / peak
    print("filtered accelerometer: worst error of H_filt against H_raw/(1 + s/(2 pi F)) "
          "over 0.01..400 Hz, relative to the peak response: %.3g" % worst)
    if not worst < 1e-12:
        fail("filtered response: relative error %.3g" % worst)
    if abs(D[fl, u]) != 0.0:
        fail("a filtered reading has no direct feedthrough: D %g" % D[fl, u])
    d = run("discretize", f, "--rate", "100Hz", "--format", "json")
    rd = np.array(d["Rd"], dtype=float)
    qc = d["Qc"]
    N, T = 0.002, 0.01
    # README "Noise convention": a density N averaged over T gives N^2 / T in Rd
    close("raw accelerometer Rd = N^2/T", rd[r, r], N * N / T, 1e-14)
    close("filtered accelerometer Rd = noise^2 only", rd[fl, fl], 0.01 ** 2, 1e-14)
    close("filtered accelerometer density as process noise Qc = N^2",
          qc[[x["name"] for x in d["inputs"] if x["role"] == "disturbance"].index("filt.noise")], N * N, 1e-14)


def rods():
    """Two uniform rods, each hinged at its end, the lower 'at: end' of the upper:
    the compound double pendulum.  Small oscillations about hanging, in absolute
    angles (Lagrange's equations, common practice; e.g. J. L. Meriam, L. G. Kraige,
    Engineering Mechanics: Dynamics, rigid-body kinetics):
      M = [[(m1/3 + m2) L1^2, m2 L1 L2 / 2], [m2 L1 L2 / 2, m2 L2^2 / 3]],
      K = g [[(m1/2 + m2) L1, 0], [0, m2 L2 / 2]],  omega^2 = eig(M^-1 K)."""
    m1, m2, L1, L2, g = 0.5, 0.3, 0.4, 0.3, 9.80665
    M = np.array([[(m1 / 3 + m2) * L1 ** 2, m2 * L1 * L2 / 2], [m2 * L1 * L2 / 2, m2 * L2 ** 2 / 3]])
    K = g * np.array([[(m1 / 2 + m2) * L1, 0], [0, m2 * L2 / 2]])
    want = sorted(np.sqrt(np.linalg.eigvals(np.linalg.solve(M, K)).real))
    lin = run("linearize", model("rod-chain.yaml"), "--format", "json")
    ev = np.linalg.eigvals(np.array(lin["A"], dtype=float))
    got = sorted(abs(e.imag) for e in ev if e.imag > 0)
    if len(got) != 2:
        fail("rod chain: eigenvalues %s" % ev)
        return
    for k in range(2):
        close("rod chain (at: end) frequency %d" % k, got[k], want[k], 1e-10)


def main():
    encoders()
    biases()
    filters()
    rods()
    if failures:
        print("test_sensors: %d failure(s)" % failures)
        sys.exit(1)
    print("test_sensors: ok")


main()
