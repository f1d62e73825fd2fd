#!/usr/bin/python3
"""Independent sympy reference for a two-wheeled balancing base.

The rig (a model of our own, values chosen at random-looking decimals so
that no term can hide behind a 1 or a 0):
  * `travel`: a rolling joint on the ground, wheel radius r; the wheel centre
    is at (x, r) and the wheel's angle is -x/r (README.md, "Signs and
    frames": forward travel turns the wheel clockwise);
  * `tilt`: a hinge from the wheel to the chassis with `reference: world`, so
    its coordinate phi is the chassis' world angle (README.md, "Signs and frames"); the
    chassis frame sits at the wheel centre, its centre of mass at com;
  * a damper across `tilt` (relative rotation child minus parent:
    phi - (-x/r));
  * two identical gearmotors (`count: 2`, `polarity: -1`) with stator on the
    chassis and rotor on the wheel: w_out = rotor rate - stator rate
    = -xd/r - phid, the rotor spins at phid + N*w_out (README.md, "Motors:
    gearbox, efficiency, count");
  * voltage drive, with the armature inductance kept (current state) and
    with it neglected (current algebraic);
  * outputs: a gyro on the chassis (its rate), the motor-shaft encoder
    (motor_angle, rad) and an accelerometer on the chassis along the body x
    and y axes (specific force f = a - g: D. H. Titterton, J. L. Weston,
    Strapdown Inertial Navigation Technology, 2004, from memory).

Conventions are those of README.md, listed in
lagrange_common.py. The Lagrangian is written out by hand below; nothing is
taken from rigmat except the JSON it prints.

Usage: RIGMAT=build/rigmat /usr/bin/python3 tests/ref/test_lagrange_balancer.py
       /usr/bin/python3 tests/ref/test_lagrange_balancer.py --self-test
"""

import math
import os
import sys

import numpy as np
import sympy as sp

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import lagrange_common as lc  # noqa: E402

# ------------------------------------------------------------------ symbols
x, phi, xd, phid, i, Vin = sp.symbols("x phi xd phid i V_in", real=True)
(mw, rdisc, r, mc, Ic, cx, cy, ax, ay, g, slope, cdamp,
 R, L, Kt, Ke, Jr, b, N, eff, count) = sp.symbols(
    "m_w r_disc r m_c I_c c_x c_y a_x a_y g slope c_d R L K_t K_e J_r b N eta n",
    positive=True)
pol = sp.Symbol("pol", real=True)


def derive(neglect_inductance):
    """Return (f, h, x, u): the nonlinear model of the balancer, symbolic."""
    q = sp.Matrix([x, phi])
    qd = sp.Matrix([xd, phid])

    # Kinematics (README.md, "Signs and frames").
    p_w = sp.Matrix([x, r])                        # rolling: centre at at + [q, r]
    th_w = -x / r                                  # wheel angle -q/r
    th_c = phi                                     # reference: world
    p_c = p_w + lc.rot(phi) * sp.Matrix([cx, cy])  # chassis centre of mass
    w_w = sp.diff(th_w, x) * xd                    # wheel angular rate
    w_c = phid                                     # chassis angular rate

    # Kinetic energy: wheel (disc about its centre, m r_disc^2/2), chassis
    # (centroidal inertia I_c), and the motors' rotors and no load inertia.
    Iw = mw * rdisc ** 2 / 2
    motor = lc.Motor(R, L, Kt, Ke, Jr, b, N, eff, count, pol)
    w_out = w_w - w_c           # stator/rotor form: rotor rate minus stator rate
    w_stator = w_c
    T = (lc.kinetic_point(mw, p_w, q, qd) + Iw * w_w ** 2 / 2
         + lc.kinetic_point(mc, p_c, q, qd) + Ic * w_c ** 2 / 2
         + motor.kinetic(w_out, w_stator))

    # Potential energy of gravity, g_vec = -g (sin slope, cos slope).
    gvec = lc.gravity_vector(g, slope)
    Vpot = lc.potential_gravity(mw, p_w, gvec) + lc.potential_gravity(mc, p_c, gvec)

    # Non-conservative forces: the damper across tilt, the motors.
    if neglect_inductance:
        i_m = motor.i_neglected(Vin, w_out)
    else:
        i_m = i
    Q = lc.viscous_q(cdamp, w_c - w_w, qd) + motor.q_force(i_m, w_out, qd)

    M, rhs = lc.lagrange_mass_rhs(T, Vpot, Q, q, qd)
    qdd = M.LUsolve(rhs)

    states = [x, phi, xd, phid]
    f = [xd, phid, qdd[0], qdd[1]]
    if not neglect_inductance:
        states.append(i)
        f.append(motor.didt(Vin, i, w_out))
    f = sp.Matrix(f)

    # Outputs.
    gyro = w_c
    theta_out = th_w - th_c
    s = lc.motor_angle_sign(theta_out, x)          # rotor's own joint: travel
    enc = s * N * (theta_out - theta_out.subs({x: 0, phi: 0}))
    P = p_w + lc.rot(phi) * sp.Matrix([ax, ay])    # accelerometer position
    sf = lc.specific_force(P, phi, q, qd, qdd, gvec)   # a_P = J qdd + Jdot qd, body axes
    h = sp.Matrix([gyro, enc, sf[0], sf[1]])
    return f, h, states, [Vin], s


STATE_NAMES_L = ["travel.position", "tilt.angle", "travel.velocity", "tilt.rate", "drive.current"]
STATE_NAMES_NOL = STATE_NAMES_L[:4]
INPUT_NAMES = ["drive"]
OUTPUT_NAMES = ["gyro", "enc", "accel_x", "accel_y"]

# Two operating points of one rig. "rest": upright, still, no input, level
# ground and a centred chassis: a true steady state. "moving": on a 2.5 deg
# slope, centre of mass 7 mm forward, leaning 3.7 deg and tipping at
# 0.6 rad/s while rolling at 0.41 m/s with 2.9 V applied: not a steady state
# (the tool reports its residual and f0), but A, B, C, D are still the
# Jacobians there, and every velocity-product term shows.
BASE = dict(mw=0.287, rdisc=0.058, r=0.0613, mc=3.87, Ic=0.0583, cy=0.163,
            ax=0.013, ay=0.247, g=9.79, cdamp=0.0041,
            R=1.93, L=0.00087, Kt=0.0447, Ke=0.0452, Jr=5.7e-6, b=2.3e-5,
            N=26.9, eff=0.79, count=2, pol=-1)
CASES = {
    "rest": dict(BASE, cx=0.0, slope=0.0, tilt=0.0, travel_rate=0.0, tilt_rate=0.0, volts=0.0),
    "moving": dict(BASE, cx=0.007, slope=math.radians(2.5), tilt=math.radians(3.7),
                   travel_rate=0.41, tilt_rate=0.6, volts=2.9),
}


def model_yaml(c, neglect_inductance):
    ind = "neglect" if neglect_inductance else "%s H" % lc.fmt(c["L"])
    return """rigmat: 1
name: sympy reference balancer
gravity: {g} m/s^2
slope: {slope} rad
bodies:
  wheel:   {{mass: 287 g, shape: {{disc: {{radius: 58 mm}}}}}}
  chassis: {{mass: 3.87 kg, inertia: 0.0583 kg*m^2, com: [{cx} m, 163 mm]}}
joints:
  travel: {{type: rolling, parent: ground, child: wheel, radius: 61.3 mm}}
  tilt:   {{type: hinge, parent: wheel, child: chassis, reference: world}}
dampers:
  axle_drag: {{across: tilt, coefficient: 0.0041 N*m*s/rad}}
motors:
  drive:
    stator: chassis
    rotor: wheel
    count: 2
    polarity: -1
    drive: voltage
    resistance: 1.93 ohm
    inductance: {ind}
    torque_constant: 44.7 mN*m/A
    back_emf_constant: 0.0452 V*s/rad
    rotor_inertia: 57 g*cm^2
    friction: 2.3e-5 N*m*s/rad
    gear_ratio: 26.9
    efficiency: 0.79
sensors:
  gyro:    {{measures: rate, of: chassis}}
  enc:     {{measures: motor_angle, of: drive}}
  accel_x: {{measures: specific_force, of: chassis, at: [13 mm, 247 mm], axis: x}}
  accel_y: {{measures: specific_force, of: chassis, at: [13 mm, 247 mm], axis: y}}
operating_point:
  coordinates: {{tilt: {tilt} rad}}
  rates: {{travel: {vr} m/s, tilt: {wr} rad/s}}
  inputs: {{drive: {volts} V}}
  solve: []
""".format(g=lc.fmt(c["g"]), slope=lc.fmt(c["slope"]), cx=lc.fmt(c["cx"]), ind=ind,
           tilt=lc.fmt(c["tilt"]), vr=lc.fmt(c["travel_rate"]), wr=lc.fmt(c["tilt_rate"]),
           volts=lc.fmt(c["volts"]))


def params(c):
    keys = dict(mw=mw, rdisc=rdisc, r=r, mc=mc, Ic=Ic, cx=cx, cy=cy, ax=ax, ay=ay, g=g,
                slope=slope, cdamp=cdamp, R=R, L=L, Kt=Kt, Ke=Ke, Jr=Jr, b=b, N=N,
                eff=eff, count=count, pol=pol)
    return {sym: c[k] for k, sym in keys.items()}


def operating_point(c, neglect_inductance):
    """x0, u0 as the tool must take them: unnamed coordinates 0, the given
    rates, and the current following (di/dt = 0 at the point)."""
    w_out = -c["travel_rate"] / c["r"] - c["tilt_rate"]
    x0 = [0.0, c["tilt"], c["travel_rate"], c["tilt_rate"]]
    if not neglect_inductance:
        x0.append((c["volts"] - c["pol"] * c["Ke"] * c["N"] * w_out) / c["R"])
    return x0, [c["volts"]]


def reference(model, c, neglect_inductance):
    x0, u0 = operating_point(c, neglect_inductance)
    return lc.reference(model, params(c), x0, u0)


# ---------------------------------------------------------------- self-test

def self_test(models):
    rep = lc.Report("balancer self-test")
    lc.selftest_dc_motor(rep)
    f, h, xs, us, s = models[False]

    def off(extra):
        # Motor switched off and massless, no damping: the balancer is then a
        # pendulum on a "cart" whose mass is m_w + I_w/r^2 (the wheel).
        p = dict(BASE, cx=0.0, slope=0.0, Kt=0.0, Ke=0.0, Jr=0.0, b=0.0, cdamp=0.0,
                 R=1.0, L=1.0)
        p.update(extra)
        A = lc.evaluate(f.subs({k: lc.to_sym(v) for k, v in params(p).items()}).jacobian(
            sp.Matrix(xs)), {x: 0, phi: 0, xd: 0, phid: 0, i: 0, Vin: 0})
        return A, p

    # 1. Cart-pole, point mass on a massless rod (M = 1, m = 0.1, l = 0.5,
    #    g = 9.81; hand-derived: eigenvalues 0, 0, +-sqrt((M + m) g / (M l))):
    #    0, 0, +-4.6456431201718456.
    #    The wheel becomes the cart with a point-mass wheel (r_disc = 0).
    A, _ = off(dict(mw=1.0, rdisc=0.0, mc=0.1, Ic=0.0, cy=0.5, g=9.81))
    ev = np.sort_complex(np.linalg.eigvals(A[:4, :4]))
    want = np.sort_complex(np.array([-4.6456431201718456, 0, 0, 4.6456431201718456], complex))
    rep.rel("self-test: point-mass cart-pole eigenvalues", np.abs(ev), np.abs(want), 1e-12)
    rep.check("self-test: unstable root = +sqrt((M+m)g/(Ml))",
              abs(ev.real.max() - math.sqrt(1.1 * 9.81 / 0.5)) < 1e-12,
              "%.16g" % ev.real.max())

    # 2. With inertias: the linearized pendulum on a cart of K. J. Astrom and
    #    R. M. Murray, "Feedback Systems" (2008), balance system, stated from
    #    memory: lambda^2 = M_t m g l / (M_t J_t - m^2 l^2), M_t = M + m,
    #    J_t = J + m l^2, with the wheel as the cart: M = m_w + I_w/r^2.
    A, p = off({})
    Mcart = p["mw"] + p["mw"] * p["rdisc"] ** 2 / 2 / p["r"] ** 2
    Mt = Mcart + p["mc"]
    Jt = p["Ic"] + p["mc"] * p["cy"] ** 2
    lam = math.sqrt(Mt * p["mc"] * p["g"] * p["cy"] / (Mt * Jt - (p["mc"] * p["cy"]) ** 2))
    ev = np.linalg.eigvals(A[:4, :4])
    rep.rel("self-test: wheel+chassis unstable root (A&M)", [ev.real.max()], [lam], 1e-12)

    # 3. Equilibrium: upright, still, no input, level ground -> f = 0, and the
    #    accelerometer reads +1 g along the chassis' y axis (f = a - g, as above).
    pr = params(CASES["rest"])
    at = {x: 0, phi: 0, xd: 0, phid: 0, i: 0, Vin: 0}
    fr = lc.evaluate(f.subs({k: lc.to_sym(v) for k, v in pr.items()}), at)[:, 0]
    hr = lc.evaluate(h.subs({k: lc.to_sym(v) for k, v in pr.items()}), at)[:, 0]
    rep.rel("self-test: f = 0 upright at rest", fr, np.zeros(5), 1e-14)
    rep.rel("self-test: accel reads (0, +g) at rest", hr[2:], [0.0, BASE["g"]], 1e-14)

    # 4. The encoder sign: forward travel reads positive (README.md, "Rules
    #    worth knowing" and the worked sign example: forward is +x).
    rep.check("self-test: encoder sign s = -1 (wheel angle -x/r)", s == -1, "s = %d" % s)

    # 5. Inductance neglected = the L-kept model with di/dt = 0 eliminated: the
    #    Schur complement A11 - A12 A22^-1 A21 (exact for any L, since the
    #    current equation is linear in i; implicit function theorem).
    c = CASES["moving"]
    wl = reference(models[False], c, False)
    wn = reference(models[True], c, True)
    A, B, C, D = wl["A"], wl["B"], wl["C"], wl["D"]
    k = np.linalg.solve(A[4:, 4:], np.hstack([A[4:, :4], B[4:, :]]))
    rep.rel("self-test: neglected L = Schur complement, A", wn["A"], A[:4, :4] - A[:4, 4:] @ k[:, :4])
    rep.rel("self-test: neglected L = Schur complement, B", wn["B"], B[:4] - A[:4, 4:] @ k[:, 4:])
    rep.rel("self-test: neglected L = Schur complement, C", wn["C"], C[:, :4] - C[:, 4:] @ k[:, :4])
    rep.rel("self-test: neglected L = Schur complement, D", wn["D"], D - C[:, 4:] @ k[:, 4:])
    rep.finish()


def main():
    models = {False: derive(False), True: derive(True)}
    if lc.selftest_requested():
        self_test(models)
    exe = lc.rigmat_binary()
    rep = lc.Report("balancer reference")
    with lc.tmpdir() as tmp:
        for neglect in (False, True):
            for cname, c in CASES.items():
                label = "%s, %s" % ("L neglected" if neglect else "L kept", cname)
                js = lc.run_linearize(exe, model_yaml(c, neglect), tmp,
                                      "balancer-%s-%s.yaml" % ("nol" if neglect else "l", cname))
                want = reference(models[neglect], c, neglect)
                states = STATE_NAMES_NOL if neglect else STATE_NAMES_L
                lc.compare_linearization(rep, label, js, states, INPUT_NAMES, OUTPUT_NAMES, want)
    rep.finish()


if __name__ == "__main__":
    main()
