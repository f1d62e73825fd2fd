"""Reference check of the O(N) dynamics at scale: the natural frequencies
of the 1000-mass chain (bench/chains.py) from `rigmat linearize --format
mtx` equal those numpy computes from the chain's own M and K.

The chain carries each mass on a slider mounted on the mass before it
(relative coordinates, so rigmat's mass matrix is full); numpy gets the
same chain in absolute positions: M = diag(m), K tridiagonal with spring i
between masses i-1 and i (spring 0 to the ground), the textbook form of a
spring-mass chain (common practice).  The coordinate change is a
similarity, so the eigenvalues of M^-1 K are those of -A_qq, the block of
A that maps the coordinates to the accelerations (dampers act on the
rates only).  Masses and stiffnesses are read from the YAML text here, not
from rigmat.  The frequencies sqrt(lambda) must agree to 1e-8 relative;
numpy takes the symmetric form M^-1/2 K M^-1/2 (eigvalsh).

Usage: RIGMAT=build/rigmat /usr/bin/python3 tests/ref/test_chain_frequencies.py
"""
import os
import re
import subprocess
import sys
import tempfile

import numpy as np

RIGMAT = os.environ.get("RIGMAT", "build/rigmat")
HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))
N = 1000
TOL = 1e-8


def read_mtx(path):
    """A Matrix Market array file: its row names and the matrix."""
    names, shape, vals = [], None, []
    with open(path) as f:
        for line in f:
            if line.startswith("%"):
                m = re.match(r"% row \d+: (\S+)", line)
                if m:
                    names.append(m.group(1))
                continue
            if shape is None:
                shape = tuple(int(v) for v in line.split())
                continue
            vals.append(float(line))
    a = np.array(vals).reshape(shape[1], shape[0]).T  # entries by columns
    return names, a


def main():
    fails = 0
    with tempfile.TemporaryDirectory() as tmp:
        model = os.path.join(tmp, "chain.yaml")
        text = subprocess.run([sys.executable, os.path.join(ROOT, "bench", "chains.py"),
                               "mass", str(N)], check=True, capture_output=True,
                              text=True).stdout
        with open(model, "w") as f:
            f.write(text)
        mass = [float(v) for v in re.findall(r"\{mass: ([0-9.eE+-]+) kg\}", text)]
        stiff = [float(v) for v in re.findall(r"stiffness: ([0-9.eE+-]+) N/m", text)]
        assert len(mass) == N and len(stiff) == N, (len(mass), len(stiff))
        out = os.path.join(tmp, "lin")
        subprocess.run([RIGMAT, "linearize", model, "--format", "mtx", "-o", out], check=True)
        names, A = read_mtx(os.path.join(out, "A.mtx"))

    pos = [names.index("x%d.position" % i) for i in range(N)]
    vel = [names.index("x%d.velocity" % i) for i in range(N)]
    Aqq = A[np.ix_(vel, pos)]
    got = np.sort(np.sqrt(np.linalg.eigvals(-Aqq).real))

    K = np.zeros((N, N))
    for i, k in enumerate(stiff):
        K[i, i] += k
        if i > 0:
            K[i - 1, i - 1] += k
            K[i - 1, i] -= k
            K[i, i - 1] -= k
    s = 1.0 / np.sqrt(np.array(mass))
    want = np.sort(np.sqrt(np.linalg.eigvalsh(K * s[:, None] * s[None, :])))

    rel = np.max(np.abs(got - want) / want)
    print("chain of %d masses: %d natural frequencies %.4g .. %.4g rad/s, worst relative "
          "difference %.2e (tolerance %g)" % (N, N, want[0], want[-1], rel, TOL))
    if not rel <= TOL:
        print("FAIL: frequencies differ")
        fails += 1
    # the scale is right: by Gershgorin's theorem every eigenvalue of
    # M^-1 K is at most max 2 (k_i + k_i+1) / m_i <= 4 k_max / m_min
    if not want[-1] < 2.0 * np.sqrt(max(stiff) / min(mass)) * 1.01:
        print("FAIL: the highest frequency is above the chain's bound")
        fails += 1
    return 1 if fails else 0


if __name__ == "__main__":
    sys.exit(main())
