"""Every export format round-trips against the JSON, for every example.

For each example, `rigmat linearize` and `rigmat discretize --rate 200Hz`
(plus, on the demo, an input delay and Tustin), and `rigmat gains --rate
200Hz --weights` where the filter exists, are run once with
--format json and once per export format.  Each export is read back by a
reader outside rigmat and compared with the JSON with zero difference:

- c: the header is compiled into a program that prints every array with
  17 significant digits (C99 7.21.6.1 %.17g; enough for a binary64 to
  round-trip, IEEE 754-2008 section 5.12.2); doubles must equal the JSON
  value exactly, floats the float rounding of it (numpy.float32).  The
  header also compiles with gcc -std=c99 -Wall -Wextra -Wpedantic -Werror,
  -std=c11, as C++ (g++ -Wall -Wextra -Werror) and, for float, under
  -Wdouble-promotion, also for a Cortex-M4 when arm-none-eabi-gcc is
  installed.  A model with an awkward name must still give valid
  identifiers.
- numpy: the module is imported by this interpreter's numpy.
- mtx: every file is read by scipy.io.mmread.
- csv: parsed by Python's csv module (RFC 4180).
- latex: the bmatrix blocks are parsed and their shape, labels and numbers
  compared; environments must balance.

Usage: RIGMAT=build/rigmat /usr/bin/python3 tests/ref/test_exports.py
"""
import csv
import glob
import importlib.util
import io
import json
import os
import re
import shutil
import subprocess
import sys
import tempfile

import numpy as np
import scipy.io

RIGMAT = os.environ.get("RIGMAT", "build/rigmat")
HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))
CC = os.environ.get("CC_TEST", "gcc")
CXX = os.environ.get("CXX_TEST", "g++")
ARM_CC = "arm-none-eabi-gcc"  # optional: the float header for a Cortex-M4

failures = 0
# A name with a leading digit, a comment closer, quotes, a backslash, a
# trigraph, non-ASCII letters (YAML escapes) and a '#'.
ODD_NAME_YAML = r'name: "3-axis */ rig: \"quoted\" \\ ??= \u00e9t\u00e9 #2"'


def fail(what):
    global failures
    failures += 1
    print("FAIL: " + what)


def run(args, **kw):
    return subprocess.run([RIGMAT] + args, capture_output=True, **kw)


def expected_arrays(j):
    """The matrices and vectors the exports must hold, by export name."""
    out = {}
    for k in ("A", "B", "C", "D", "Ad", "Bd", "Cd", "Dd", "Gd", "Ed", "Qd", "Rd", "S"):
        if k in j and j[k] is not None:  # Qd is null for a transformed state
            m = np.array(j[k], dtype=np.float64)
            rows = len(j[k])
            cols = len(j[k][0]) if rows else 0
            out[k] = m.reshape(rows, cols)
    if "Qc" in j:
        out["Qc"] = np.array(j["Qc"], dtype=np.float64)
    # gains: the matrices of the Kalman filter and the LQR, named by their
    # JSON path (kalman.gain -> kalman_gain)
    for group, keys in (("kalman", ("gain", "predictor_gain", "prior_covariance",
                                    "posterior_covariance", "innovation_covariance",
                                    "output_sd")),
                        ("lqr", ("gain", "cost_to_go"))):
        if j.get(group) is None:
            continue
        for k in keys:
            m = np.array(j[group][k], dtype=np.float64)
            if k != "output_sd":  # a vector; the others are matrices
                rows = len(j[group][k])
                m = m.reshape(rows, len(j[group][k][0]) if rows else 0)
            out[group + "_" + k] = m
    op = j["operating_point"]
    out["x0"] = np.array(op["x"], dtype=np.float64)
    out["u0"] = np.array(op["u"], dtype=np.float64)
    out["y0"] = np.array(op["y"], dtype=np.float64)
    if "equilibrium" in j:
        out["f0"] = np.array(j["equilibrium"]["f0"], dtype=np.float64)
    return out


def expected_scalars(j):
    s = {}
    for k in ("period", "delay", "prewarp"):
        if k in j:
            s[k] = j[k]
    if "equilibrium" in j:
        s["residual"] = j["equilibrium"]["residual"]
    for group in ("kalman", "lqr"):
        if j.get(group) is not None:
            s[group + "_residual"] = j[group]["residual"]
    return s


def same(a, b):
    a = np.asarray(a, dtype=np.float64)
    b = np.asarray(b, dtype=np.float64)
    return a.shape == b.shape and np.array_equal(a, b)


# ---------------------------------------------------------------- numpy

def check_numpy(tag, j, text, tmp):
    path = os.path.join(tmp, "exported_model.py")
    with open(path, "w") as f:
        f.write(text)
    spec = importlib.util.spec_from_file_location("exported_model", path)
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    for k, v in expected_arrays(j).items():
        got = getattr(mod, k, None)
        if got is None or not same(got, v):
            fail("%s numpy: %s differs" % (tag, k))
    for k, v in expected_scalars(j).items():
        if getattr(mod, k, None) != v:
            fail("%s numpy: %s = %r, JSON %r" % (tag, k, getattr(mod, k, None), v))
    for g in ("states", "inputs", "outputs"):
        if getattr(mod, g) != [s["name"] for s in j[g]] or \
                getattr(mod, g + "_units") != [s["unit"] for s in j[g]]:
            fail("%s numpy: %s names or units differ" % (tag, g))
    if mod.order_hash != j["order_hash"] or mod.model != j["model"]:
        fail("%s numpy: order hash or model name differ" % tag)
    if "Ad" in j:
        # `states` lists every row of Ad, the delay stages included
        names = [s["name"] for s in j["states"]]
        if mod.state_names != names:
            fail("%s numpy: state_names are not the rows of Ad" % tag)


# ---------------------------------------------------------------- csv

def check_csv(tag, j, text):
    tables = {}
    for block in text.strip("\n").split("\n\n"):
        rows = list(csv.reader(io.StringIO(block)))
        tables[rows[0][0]] = rows
    meta = {r[0]: r[1] for r in tables.pop("result")[1:]}
    if meta.get("order_hash") != j["order_hash"] or meta.get("model") != j["model"]:
        fail("%s csv: order hash or model name differ" % tag)
    for k, v in expected_scalars(j).items():
        if float(meta.get(k, "nan")) != v:
            fail("%s csv: %s differs" % (tag, k))
    for k, v in expected_arrays(j).items():
        t = tables.get(k)
        if t is None:
            fail("%s csv: no table %s" % (tag, k))
            continue
        vals = np.array([[float(x) for x in r[1:]] for r in t[1:]], dtype=np.float64)
        if v.ndim == 1:
            vals = vals.reshape(-1)
        elif v.shape[1] == 0:
            vals = vals.reshape(v.shape[0], 0)
        if not same(vals, v):
            fail("%s csv: %s differs" % (tag, k))
    a = tables.get("A") or tables.get("Ad") or tables.get("kalman_prior_covariance") or \
        tables.get("lqr_cost_to_go")
    labels = ["%s [%s]" % (s["name"], s["unit"]) for s in j["states"]]
    if a[0][1:1 + len(labels)] != labels or [r[0] for r in a[1:1 + len(labels)]] != labels:
        fail("%s csv: state labels of A differ" % tag)


# ---------------------------------------------------------------- mtx

def check_mtx(tag, j, folder):
    for k, v in expected_arrays(j).items():
        path = os.path.join(folder, k + ".mtx")
        if v.size == 0:
            if os.path.exists(path):
                fail("%s mtx: empty %s written" % (tag, k))
            continue
        if not os.path.exists(path):
            fail("%s mtx: no %s.mtx" % (tag, k))
            continue
        m = scipy.io.mmread(path)
        if not same(m.reshape(v.shape), v) or m.shape[0] != v.shape[0]:
            fail("%s mtx: %s differs" % (tag, k))
        with open(path) as f:
            head = f.read()
        first = j["states"][0] if k in ("A", "Ad", "Qd", "x0", "kalman_prior_covariance",
                                        "lqr_cost_to_go") else None
        if "% row 1: " not in head or (first is not None and
                                      "%% row 1: %s [%s]\n" % (first["name"], first["unit"])
                                      not in head):
            fail("%s mtx: %s lacks its row names" % (tag, k))


# ---------------------------------------------------------------- latex

NUM = re.compile(r"^\s*(-?[0-9.]+(?:e[-+]?[0-9]+)?)(?:\s*\\times\s*10\^\{(-?[0-9]+)\})?\s*$")


def tex_number(s):
    m = NUM.match(s)
    if m is None:
        raise ValueError("not a number: %r" % s)
    return float(m.group(1) + ("e" + m.group(2) if m.group(2) else ""))


def check_latex(tag, j, text):
    for env in ("equation*", "array", "matrix", "bmatrix"):
        if text.count("\\begin{%s}" % env) != text.count("\\end{%s}" % env):
            fail("%s latex: \\begin/\\end{%s} do not balance" % (tag, env))
    blocks = re.findall(r"\n% (\w+) \((\d+) x (\d+)\)\n(.*?)\\end\{equation\*\}", text, re.S)
    found = {name: (int(r), int(c), body) for name, r, c, body in blocks}
    for k, v in expected_arrays(j).items():
        if k not in found:
            fail("%s latex: no block %s" % (tag, k))
            continue
        r, c, body = found[k]
        want = v.reshape(v.shape[0], 1) if v.ndim == 1 else v
        if (r, c) != want.shape:
            fail("%s latex: %s is %dx%d" % (tag, k, r, c))
            continue
        if want.size == 0:
            continue
        m = re.search(r"\\begin\{bmatrix\}\n(.*?)\n\s*\\end\{bmatrix\}", body, re.S)
        rows = [row.split("&") for row in m.group(1).split("\\\\")]
        got = np.array([[tex_number(x) for x in row] for row in rows], dtype=np.float64)
        if not same(got, want):
            fail("%s latex: %s differs" % (tag, k))
        labels = re.findall(r"\\text\{\\scriptsize ([^}]*)\}", body)
        if len(labels) != r + (c if v.ndim == 2 else 0):
            fail("%s latex: %s has %d labels" % (tag, k, len(labels)))


# ---------------------------------------------------------------- c

def c_program(j, header, ctype, prefix):
    fmt = "%.17g" if ctype == "double" else "%.9g"
    lines = ['#include <stdio.h>', '#include "%s"' % header, "int main(void)", "{",
             "    size_t i, k;"]
    for k, v in expected_arrays(j).items():
        if v.size == 0:
            continue
        name = prefix + "_" + k
        if v.ndim == 1:
            lines.append('    for (i = 0; i < sizeof %s / sizeof %s[0]; i++)' % (name, name))
            lines.append('        printf("%s %%zu 0 %s\\n", i, (double)%s[i]);' % (k, fmt, name))
        else:
            lines.append('    for (i = 0; i < sizeof %s / sizeof %s[0]; i++)' % (name, name))
            lines.append('        for (k = 0; k < sizeof %s[0] / sizeof %s[0][0]; k++)' % (name, name))
            lines.append('            printf("%s %%zu %%zu %s\\n", i, k, (double)%s[i][k]);'
                         % (k, fmt, name))
    for k in expected_scalars(j):
        lines.append('    printf("%s 0 0 %s\\n", (double)%s_%s);' % (k, fmt, prefix, k))
    lines.append('    printf("hash %%s\\n", %s_ORDER_HASH);' % prefix.upper())
    lines.append("    return 0;")
    lines.append("}")
    return "\n".join(lines) + "\n"


def compile_ok(tag, cmd):
    p = subprocess.run(cmd, capture_output=True, text=True)
    if p.returncode != 0:
        fail("%s: %s\n%s" % (tag, " ".join(cmd), p.stderr[-2000:]))
        return False
    return True


def check_c(tag, j, args, tmp, ctype, prefix, name_args=()):
    header = os.path.join(tmp, "model_%s.h" % ctype)
    p = run(args + ["--format", "c", "--ctype", ctype, "-o", header] + list(name_args))
    if p.returncode != 0:
        fail("%s c %s: exit %d %s" % (tag, ctype, p.returncode, p.stderr.decode()))
        return
    src = os.path.join(tmp, "print_%s.c" % ctype)
    with open(src, "w") as f:
        f.write(c_program(j, os.path.basename(header), ctype, prefix))
    exe = os.path.join(tmp, "print_%s" % ctype)
    strict = ["-Wall", "-Wextra", "-Werror", "-I", tmp]
    if not compile_ok(tag + " c99 " + ctype, [CC, "-std=c99", "-Wpedantic", "-Wdouble-promotion"]
                      + strict + [src, "-o", exe]):
        return
    compile_ok(tag + " c11 " + ctype, [CC, "-std=c11", "-Wpedantic", "-fsyntax-only"] + strict
               + [src])
    compile_ok(tag + " c++ " + ctype, [CXX, "-x", "c++", "-fsyntax-only"] + strict + [src])
    if ctype == "float" and shutil.which(ARM_CC):
        # a microcontroller with a single-precision FPU: no double arithmetic
        compile_ok(tag + " arm float", [ARM_CC, "-std=c99", "-mcpu=cortex-m4", "-mthumb",
                                        "-mfloat-abi=hard", "-mfpu=fpv4-sp-d16", "-Wpedantic",
                                        "-Wdouble-promotion", "-fsyntax-only"] + strict + [src])
    out = subprocess.run([exe], capture_output=True, text=True, check=True).stdout
    got = {}
    for line in out.splitlines():
        parts = line.split()
        if parts[0] == "hash":
            if parts[1] != j["order_hash"]:
                fail("%s c: order hash differs" % tag)
            continue
        got.setdefault(parts[0], {})[(int(parts[1]), int(parts[2]))] = float(parts[3])
    conv = (lambda x: x) if ctype == "double" else (lambda x: float(np.float32(x)))
    for k, v in expected_arrays(j).items():
        if v.size == 0:
            continue
        vv = v.reshape(v.shape[0], -1)
        for (a, b), x in np.ndenumerate(vv):
            g = got.get(k, {}).get((a, b))
            if g is None or conv(g) != conv(x):
                fail("%s c %s: %s[%d][%d] = %r, want %r" % (tag, ctype, k, a, b,
                                                          got.get(k, {}).get((a, b)), conv(x)))
                break
    for k, v in expected_scalars(j).items():
        g = got.get(k, {}).get((0, 0))
        if g is None or conv(g) != conv(v):
            fail("%s c %s: %s differs" % (tag, ctype, k))


def c_prefix(model):
    s = re.sub(r"[^a-z0-9]+", "_", model.lower()).strip("_")
    if not s:
        return "rigmat_model"
    return "m_" + s if s[0].isdigit() else s


# ---------------------------------------------------------------- main

def check_case(tag, args, tmp):
    p = run(args + ["--format", "json"])
    if p.returncode != 0:
        fail("%s json: exit %d" % (tag, p.returncode))
        return
    j = json.loads(p.stdout)
    for fmt in ("numpy", "csv", "latex"):
        q = run(args + ["--format", fmt])
        if q.returncode != 0:
            fail("%s %s: exit %d %s" % (tag, fmt, q.returncode, q.stderr.decode()))
            continue
        text = q.stdout.decode()
        {"numpy": lambda: check_numpy(tag, j, text, tmp), "csv": lambda: check_csv(tag, j, text),
         "latex": lambda: check_latex(tag, j, text)}[fmt]()
    folder = os.path.join(tmp, "mtx")
    q = run(args + ["--format", "mtx", "-o", folder])
    if q.returncode != 0:
        fail("%s mtx: exit %d %s" % (tag, q.returncode, q.stderr.decode()))
    else:
        check_mtx(tag, j, folder)
    for ctype in ("double", "float"):
        check_c(tag, j, args, tmp, ctype, c_prefix(j["model"]))


def main():
    cases = []
    for path in sorted(glob.glob(os.path.join(ROOT, "examples", "*.yaml"))):
        name = os.path.basename(path)
        cases.append((name + " linearize", ["linearize", path]))
        cases.append((name + " discretize", ["discretize", path, "--rate", "200Hz"]))
    demo = os.path.join(ROOT, "examples", "balancer.yaml")
    # gains: the examples whose filter exists (the others have a cyclic
    # coordinate without process noise and stop with exit 3), with their
    # weights file for the LQR, and the demo without one
    for name in ("balancer", "ball-beam", "pendulum-motor", "quarter-car"):
        cases.append((name + " gains", ["gains", os.path.join(ROOT, "examples", name + ".yaml"),
                                        "--rate", "200Hz", "--weights",
                                        os.path.join(ROOT, "tests", "gains", name + ".yaml")]))
    cases.append(("balancer gains, no weights", ["gains", demo, "--rate", "200Hz"]))
    cases.append(("balancer delay", ["discretize", demo, "--rate", "200Hz", "--delay", "1.5"]))
    cases.append(("balancer tustin", ["discretize", demo, "--rate", "1kHz", "--method", "tustin",
                                      "--prewarp", "3Hz"]))
    tmp = tempfile.mkdtemp(prefix="rigmat-exports-")
    cat = ["--catalog", os.path.join(ROOT, "catalog")]
    try:
        # The demo with a white disturbance, which reaches the accelerometer
        # directly: its result has the cross-covariance S.
        with open(demo) as f:
            text = f.read()
        white = os.path.join(tmp, "white.yaml")
        with open(white, "w") as f:
            f.write(re.sub(r", bandwidth: [0-9.]+ Hz\}", "}", text))
        cases.append(("white disturbance", ["discretize", white, "--rate", "200Hz"] + cat))
        j = json.loads(run(cases[-1][1] + ["--format", "json"]).stdout)
        if "S" not in j:
            fail("the white-disturbance demo has no S: the S export is not covered")
        for tag, args in cases:
            check_case(tag, args, tmp)
        # An awkward model name still gives valid identifiers, and --name wins.
        odd = os.path.join(tmp, "odd.yaml")
        with open(odd, "w") as f:
            f.write(re.sub(r"(?m)^name: .*$", lambda m: ODD_NAME_YAML, text))
        p = run(["linearize", odd, "--format", "json"] + cat)
        j = json.loads(p.stdout)
        if j["model"] != '3-axis */ rig: "quoted" \\ ??= \u00e9t\u00e9 #2':
            fail("odd name not loaded as written: %r" % j["model"])
        check_c("odd name", j, ["linearize", odd] + cat, tmp, "double", "m_3_axis_rig_quoted_t_2")
        check_c("--name", j, ["linearize", odd] + cat, tmp, "float", "plant", ["--name", "plant"])
    finally:
        shutil.rmtree(tmp)
    if not shutil.which(ARM_CC):
        print("note: %s not found; the float header was not cross-compiled" % ARM_CC)
    print("exports: %d failure(s)" % failures)
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
