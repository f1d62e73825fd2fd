#!/usr/bin/python3
"""chains.py - write the two scaling models of `make bench` as rigmat YAML.

    chains.py mass N      a chain of N masses on sliders, each slider
                          carried by the mass before it (relative
                          coordinates), neighbours joined by a spring and a
                          damper across each slider, the first to the ground
    chains.py pendulum N  N hinged links hanging in a serial chain under
                          gravity, a torsion spring and damper at each hinge

The numbers are demo data (invented): masses 1 kg plus a small variation so
that the frequencies are distinct, springs 1000 N/m.  Written to stdout.
"""
import sys


def mass_chain(n):
    out = ["rigmat: 1", "name: mass chain %d" % n, "gravity: 0 m/s^2", "bodies:"]
    for i in range(n):
        out.append("  m%d: {mass: %.6g kg}" % (i, 1.0 + 0.25 * ((7 * i) % 5) / 4.0))
    out.append("joints:")
    parent = "ground"
    for i in range(n):
        out.append("  x%d: {type: slider, parent: %s, child: m%d, axis: [1, 0]}"
                   % (i, parent, i))
        parent = "m%d" % i
    out.append("springs:")
    for i in range(n):
        out.append("  k%d: {across: x%d, stiffness: %.6g N/m}"
                   % (i, i, 1000.0 * (1.0 + 0.1 * ((3 * i) % 4))))
    out.append("dampers:")
    for i in range(n):
        out.append("  c%d: {across: x%d, coefficient: 0.5 N*s/m}" % (i, i))
    out.append("forces:")
    out.append("  push: {across: x%d, role: input}" % (n - 1))
    out.append("sensors:")
    out.append("  tip: {measures: position, of: x%d}" % (n - 1))
    return "\n".join(out) + "\n"


def pendulum_chain(n):
    out = ["rigmat: 1", "name: pendulum chain %d" % n, "gravity: 9.80665 m/s^2", "bodies:"]
    for i in range(n):
        out.append("  l%d: {mass: 0.2 kg, inertia: 0.0005 kg*m^2, com: [0, -0.05 m]}" % i)
    out.append("joints:")
    parent = "ground"
    for i in range(n):
        at = "[0, 0]" if i == 0 else "[0, -0.1 m]"
        out.append("  h%d: {type: hinge, parent: %s, child: l%d, at: %s}" % (i, parent, i, at))
        parent = "l%d" % i
    out.append("springs:")
    for i in range(n):
        out.append("  s%d: {across: h%d, stiffness: 2 N*m/rad}" % (i, i))
    out.append("dampers:")
    for i in range(n):
        out.append("  d%d: {across: h%d, coefficient: 0.001 N*m*s/rad}" % (i, i))
    out.append("forces:")
    out.append("  twist: {across: h0, role: input}")
    out.append("sensors:")
    out.append("  tip: {measures: angle, of: l%d}" % (n - 1))
    return "\n".join(out) + "\n"


def main():
    if len(sys.argv) != 3 or sys.argv[1] not in ("mass", "pendulum"):
        sys.stderr.write("usage: chains.py mass|pendulum N\n")
        return 2
    n = int(sys.argv[2])
    sys.stdout.write(mass_chain(n) if sys.argv[1] == "mass" else pendulum_chain(n))
    return 0


if __name__ == "__main__":
    sys.exit(main())
