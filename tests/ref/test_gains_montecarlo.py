#!/usr/bin/python3
"""Monte Carlo check of `rigmat gains` on the sampled balancer (200 Hz):
the steady-state Kalman filter, run on the discrete system driven by the
model's own noise (Qd, Rd and, in the second run, the cross-covariance S),
must give an estimation error whose sample covariance matches the
posterior covariance rigmat reports, and white innovations whose
covariance matches the innovation covariance.

Set-up.  x[k+1] = Ad x + Bd u + w[k], y[k] = Cd x + Dd u + v[k], with
[w; v] drawn jointly Gaussian with covariance [[Qd, S], [S^T, Rd]] (a
symmetric square root by eigendecomposition: Qd is singular).  The plant
is unstable, so the loop is closed by rigmat's own LQR on the prior
estimate, u = -K x-, which keeps it bounded and, being a known input,
does not change the estimation error (separation principle).  The filter
runs in the filter form documented in src/study/gains.h:
    e = y - (Cd x- + Dd u);  x+ = x- + M e;  x-[k+1] = Ad x+ + Bd u + (Kp - Ad M) e.
L = 5000 independent chains (fixed seed) start at 0 and run 3000 steps,
over 10 times the slowest estimator time constant (268 samples).

Tests (stated bounds; T. W. Anderson, "An Introduction to Multivariate
Statistical Analysis", 3rd ed., 2003, section 3.3: for N i.i.d. Gaussian
samples the sample covariance entry s_ij has variance
(sigma_ii sigma_jj + sigma_ij^2) / N):
  1. Covariance: the errors x - x+ of the L chains at the last step are
     i.i.d.; every entry of their sample covariance is within 4.5 of its
     standard deviations of the posterior covariance (entries whose
     sigma_ii is below 1e-12 of the largest are skipped: round-off).  Over
     21 entries, a correct filter fails this with probability below 1e-4.
     The same for the innovations against the innovation covariance.
  2. Whiteness: the normalized autocorrelation r_j of each output's
     innovation, pooled over the chains over the last 1000 steps (N pairs),
     is within +-1.96/sqrt(N) at no fewer than 16 of the lags 1..20
     (G. E. P. Box, G. M. Jenkins, "Time Series Analysis", 1976, section
     8.2.1: r_j ~ N(0, 1/N) for white noise), and the Ljung-Box statistic
     Q = N (N + 2) sum_j r_j^2 / (N - j) is below the 0.999 quantile of
     chi-square with 20 degrees of freedom (G. M. Ljung, G. E. P. Box,
     Biometrika 65(2):297-303, 1978).
  3. The tests can fail: the same run with the gain halved, and the S run
     with the time-update term S Re^-1 e left out (two wrong filters), must
     each fail test 1 or test 2.
Run by `make check-ref` with RIGMAT set."""
import json
import os
import subprocess
import sys

import numpy as np
import scipy.stats

RIGMAT = os.environ.get("RIGMAT", "build/rigmat")
ROOT = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..")
MODEL = os.path.join(ROOT, "examples", "balancer.yaml")
WEIGHTS = os.path.join(ROOT, "tests", "gains", "balancer.yaml")
BUMP = ("forces.bump={on: chassis, at: [0, 0.3 m], direction: [1, 0], role: disturbance, "
        "density: 0.5 N/sqrt(Hz)}")
CHAINS, STEPS, WHITE_STEPS, LAGS = 5000, 3000, 1000, 20
SEED = 20261202
failures = 0


def fail(msg):
    global failures
    failures += 1
    print("FAIL: " + msg)


def run(*args):
    p = subprocess.run([RIGMAT] + list(args), capture_output=True, text=True)
    if p.returncode != 0:
        raise RuntimeError("%s: exit %d: %s" % (" ".join(args), p.returncode, p.stderr))
    return json.loads(p.stdout)


def sqrtm_psd(M):
    lam, V = np.linalg.eigh(0.5 * (M + M.T))
    return V * np.sqrt(np.clip(lam, 0.0, None))


def cov_z(samples, Sigma):
    """Largest |s_ij - sigma_ij| / sd(s_ij) over the entries that are not
    round-off (Anderson 2003, section 3.3)."""
    N = samples.shape[1]
    s = samples @ samples.T / N  # zero-mean by construction
    d = np.diag(Sigma)
    keep = d > 1e-12 * d.max()
    worst = 0.0
    for i in range(len(d)):
        for j in range(i, len(d)):
            if keep[i] and keep[j]:
                sd = np.sqrt((d[i] * d[j] + Sigma[i, j] ** 2) / N)
                worst = max(worst, abs(s[i, j] - Sigma[i, j]) / sd)
    return worst


def simulate(sets, gain_scale, drop_s=False):
    """Returns (z of the error covariance, z of the innovation covariance,
    [(lags inside, Ljung-Box Q) per output])."""
    args = []
    for s in sets:
        args += ["--set", s]
    d = run("discretize", MODEL, "--rate", "200Hz", "--format", "json", *args)
    g = run("gains", MODEL, "--rate", "200Hz", "--format", "json", "--weights", WEIGHTS, *args)
    A, B, C, D = (np.array(d[k], dtype=float) for k in ("Ad", "Bd", "Cd", "Dd"))
    Qd, Rd = np.array(d["Qd"], dtype=float), np.array(d["Rd"], dtype=float)
    n, p = A.shape[0], C.shape[0]
    S = np.array(d["S"], dtype=float) if "S" in d else np.zeros((n, p))
    k = g["kalman"]
    M = gain_scale * np.array(k["gain"], dtype=float)
    Kp = np.array(k["predictor_gain"], dtype=float)
    Kc = (Kp - A @ np.array(k["gain"], dtype=float))  # S Re^-1: the time-update term
    if drop_s:
        Kc = np.zeros_like(Kc)
    Ppost = np.array(k["posterior_covariance"], dtype=float)
    Re = np.array(k["innovation_covariance"], dtype=float)
    K = np.array(g["lqr"]["gain"], dtype=float)
    J = sqrtm_psd(np.block([[Qd, S], [S.T, Rd]]))
    rng = np.random.default_rng(SEED)
    x = np.zeros((n, CHAINS))
    xm = np.zeros((n, CHAINS))
    hist = np.zeros((LAGS + 1, p, CHAINS))
    acc = np.zeros((LAGS + 1, p))
    count = np.zeros(LAGS + 1)
    for t in range(STEPS):
        wv = J @ rng.standard_normal((n + p, CHAINS))
        w, v = wv[:n], wv[n:]
        u = -K @ xm
        y = C @ x + D @ u + v
        e = y - (C @ xm + D @ u)
        xp = xm + M @ e
        if t >= STEPS - WHITE_STEPS:
            # ring buffer: slot t % (LAGS + 1) holds e at time t
            filled = t - (STEPS - WHITE_STEPS)
            hist[t % (LAGS + 1)] = e
            for j in range(min(LAGS, filled) + 1):
                acc[j] += np.einsum("ic,ic->i", e, hist[(t - j) % (LAGS + 1)])
                count[j] += CHAINS
        if t == STEPS - 1:
            err, innov = x - xp, e
        x = A @ x + B @ u + w
        xm = A @ xp + B @ u + Kc @ e
    white = []
    for i in range(p):
        r = (acc[1:, i] / count[1:]) / (acc[0, i] / count[0])
        N = count[0]
        inside = int(np.sum(np.abs(r) <= 1.96 / np.sqrt(N)))
        q = N * (N + 2) * np.sum(r ** 2 / (N - np.arange(1, LAGS + 1)))
        white.append((inside, q))
    return cov_z(err, Ppost), cov_z(innov, Re), white


def verdict(label, sets, scale, expect_pass, drop_s=False):
    zc, zi, white = simulate(sets, scale, drop_s)
    qmax = scipy.stats.chi2.ppf(0.999, LAGS)
    ok_cov = zc <= 4.5 and zi <= 4.5
    ok_white = all(inside >= 16 and q < qmax for inside, q in white)
    print("%-28s error cov z %.2f, innovation cov z %.2f, whiteness %s (Q < %.1f)" %
          (label, zc, zi, ", ".join("%d/%d Q=%.1f" % (a, LAGS, q) for a, q in white), qmax))
    if expect_pass and not (ok_cov and ok_white):
        fail("%s: the steady-state filter fails the Monte Carlo checks" % label)
    if not expect_pass and ok_cov and ok_white:
        fail("%s: a wrong gain passed the Monte Carlo checks: the test cannot fail" % label)


def main():
    verdict("balancer", [], 1.0, True)
    verdict("balancer + white bump (S)", [BUMP], 1.0, True)
    verdict("balancer, gain halved", [], 0.5, False)
    verdict("bump, S term left out", [BUMP], 1.0, False, drop_s=True)
    if failures:
        print("%d failure(s)" % failures)
        sys.exit(1)
    print("gains Monte Carlo: filter error and innovations as predicted")


if __name__ == "__main__":
    main()
