#!/usr/bin/python3
"""Independent sympy reference for a cart-pole driven through a rack and pinion.

The rig (a model of our own, with random-looking decimal values):
  * `track`: a slider from the ground along world +x; the cart is at (p, 0)
    and does not rotate;
  * `pivot`: a hinge on the cart at [0, h] (reference: parent); its
    coordinate th is the pole's angle, counter-clockwise positive, 0 upright;
    the pole is a uniform rod of length l along its +y axis (README.md,
    "The model file": rod, direction default +y, centre of mass at mid-length,
    centroidal inertia m l^2/12);
  * dampers across `track` (cart friction) and across `pivot`;
  * one gearmotor `across: track` with `mounted_on: child`: the stator rides
    on the cart (angular rate 0, since the cart does not turn) and the pinion
    of radius rp on the output shaft meshes with a rack on the ground, so the
    relative output rate is w_out = pd/rp (README.md's convention: across a
    slider, qdot/radius), the rotor spins at 0 + N*w_out and the pinion
    (load inertia) at w_out; a positive drive pushes the cart along +x;
  * two drive variants: voltage with the inductance kept (current state),
    and current drive (the current is the input);
  * outputs: motor-shaft encoder (motor_angle, rad), pole angle relative to
    the cart, cart velocity, and an accelerometer at the pole's tip along
    the pole's x axis (specific force; D is non-zero under current drive).

Conventions: README.md's, listed in lagrange_common.py.

Usage: RIGMAT=build/rigmat /usr/bin/python3 tests/ref/test_lagrange_cartpole_rack.py
       /usr/bin/python3 tests/ref/test_lagrange_cartpole_rack.py --self-test
"""

import math
import os
import sys

import numpy as np
import sympy as sp

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import lagrange_common as lc  # noqa: E402

p, th, pd, thd, i, u = sp.symbols("p th pd thd i u", real=True)
(mcart, mpole, lpole, hpiv, g, slope, c1, c2, rp,
 R, L, Kt, Ke, Jr, b, N, eff, count, Jload) = sp.symbols(
    "m_cart m_pole l_pole h g slope c_1 c_2 r_p R L K_t K_e J_r b N eta n J_load",
    positive=True)
pol = sp.Symbol("pol", real=True)
# The pole's centroidal inertia and centre-of-mass distance, kept apart from
# the rod formulas so the self-test can make the pole a point mass.
Ipole, lcom = sp.symbols("I_pole l_com", positive=True)


def derive(current_drive):
    q = sp.Matrix([p, th])
    qd = sp.Matrix([pd, thd])

    p_cart = sp.Matrix([p, 0])                                   # slider along +x
    p_piv = p_cart + sp.Matrix([0, hpiv])                        # hinge at [0, h]
    p_pole = p_piv + lc.rot(th) * sp.Matrix([0, lcom])           # rod centre
    th_cart, th_pole = 0, th    # the cart does not turn; reference: parent
    w_cart = 0
    w_pole = thd

    motor = lc.Motor(R, L, Kt, Ke, Jr, b, N, eff, count, pol, Jload)
    w_out = pd / rp            # across a slider through a pinion of radius rp
    w_stator = w_cart          # mounted_on: child -> stator on the cart
    T = (lc.kinetic_point(mcart, p_cart, q, qd)
         + lc.kinetic_point(mpole, p_pole, q, qd) + Ipole * w_pole ** 2 / 2
         + motor.kinetic(w_out, w_stator))
    gvec = lc.gravity_vector(g, slope)
    Vpot = lc.potential_gravity(mcart, p_cart, gvec) + lc.potential_gravity(mpole, p_pole, gvec)

    i_m = u if current_drive else i
    Q = (lc.viscous_q(c1, pd, qd) + lc.viscous_q(c2, w_pole - w_cart, qd)
         + motor.q_force(i_m, w_out, qd))
    M, rhs = lc.lagrange_mass_rhs(T, Vpot, Q, q, qd)
    qdd = M.LUsolve(rhs)

    states = [p, th, pd, thd]
    f = [pd, thd, qdd[0], qdd[1]]
    if not current_drive:
        states.append(i)
        f.append(motor.didt(u, i, w_out))
    f = sp.Matrix(f)

    theta_out = p / rp                       # output rotation of a slider: q/radius
    s = lc.motor_angle_sign(theta_out, p)    # the `across` joint: track
    enc = s * N * (theta_out - theta_out.subs(p, 0))
    tip = p_piv + lc.rot(th) * sp.Matrix([0, lpole])
    sf = lc.specific_force(tip, th, q, qd, qdd, gvec)
    h = sp.Matrix([enc, th_pole - th_cart, pd, sf[0]])   # relative_angle [cart, pole]
    return f, h, states, [u], s


STATES_V = ["track.position", "pivot.angle", "track.velocity", "pivot.rate", "drive.current"]
STATES_I = STATES_V[:4]
INPUTS = ["drive"]
OUTPUTS = ["cart_enc", "pole_angle", "cart_speed", "tip_accel"]

BASE = dict(mcart=0.937, mpole=0.213, lpole=0.617, hpiv=0.0437, g=9.80665, c1=1.87, c2=0.00113,
            rp=0.0121, R=0.83, L=0.000231, Kt=0.0219, Ke=0.0223, Jr=2.93e-6, b=1.83e-6,
            N=4.37, eff=0.89, count=1, pol=1, Jload=1.79e-6)
CASES = {
    # Voltage drive, inductance kept: upright at rest, a steady state.
    "voltage": dict(BASE, slope=0.0, angle=0.0, cart_rate=0.0, pole_rate=0.0, drive=0.0),
    # Current drive on a 1.7 deg slope, the pole leaning 11 deg and swinging at
    # 0.9 rad/s, the cart at 0.37 m/s, 0.8 A applied: not a steady state.
    "current": dict(BASE, slope=math.radians(1.7), angle=math.radians(11.0), cart_rate=0.37,
                    pole_rate=0.9, drive=0.8),
}


def params(c):
    d = {mcart: c["mcart"], mpole: c["mpole"], lpole: c["lpole"], hpiv: c["hpiv"], g: c["g"],
         slope: c["slope"], c1: c["c1"], c2: c["c2"], rp: c["rp"], R: c["R"], L: c["L"],
         Kt: c["Kt"], Ke: c["Ke"], Jr: c["Jr"], b: c["b"], N: c["N"], eff: c["eff"],
         count: c["count"], pol: c["pol"], Jload: c["Jload"]}
    # A uniform rod (README.md, bodies: rod; common practice): centre at l/2,
    # inertia m l^2/12.
    d[lcom] = c.get("lcom", c["lpole"] / 2)
    d[Ipole] = c.get("Ipole", c["mpole"] * c["lpole"] ** 2 / 12)
    return d


def model_yaml(c, current_drive):
    drive = "current" if current_drive else "voltage"
    unit = "A" if current_drive else "V"
    return """rigmat: 1
name: sympy reference cart-pole on a rack
gravity: {g} m/s^2
slope: {slope} rad
bodies:
  cart: {{mass: 937 g}}
  pole: {{mass: 0.213 kg, shape: {{rod: {{length: 617 mm}}}}}}
joints:
  track: {{type: slider, parent: ground, child: cart, axis: [1, 0]}}
  pivot: {{type: hinge, parent: cart, child: pole, at: [0, 43.7 mm]}}
dampers:
  cart_drag:  {{across: track, coefficient: 1.87 N*s/m}}
  pivot_drag: {{across: pivot, coefficient: 0.00113 N*m*s/rad}}
motors:
  drive:
    across: track
    mounted_on: child
    radius: 12.1 mm
    load_inertia: 17.9 g*cm^2
    drive: {drive}
    resistance: 0.83 ohm
    inductance: 0.231 mH
    torque_constant: 0.0219 N*m/A
    back_emf_constant: 22.3 mV*s/rad
    rotor_inertia: 29.3 g*cm^2
    friction: 1.83e-6 N*m*s/rad
    gear_ratio: 4.37
    efficiency: 0.89
sensors:
  cart_enc:   {{measures: motor_angle, of: drive}}
  pole_angle: {{measures: relative_angle, of: [cart, pole]}}
  cart_speed: {{measures: velocity, of: track}}
  tip_accel:  {{measures: specific_force, of: pole, at: [0, 617 mm], axis: x}}
operating_point:
  coordinates: {{pivot: {angle} rad}}
  rates: {{track: {vr} m/s, pivot: {wr} rad/s}}
  inputs: {{drive: {drv} {unit}}}
  solve: []
""".format(g=lc.fmt(c["g"]), slope=lc.fmt(c["slope"]), drive=drive, angle=lc.fmt(c["angle"]),
           vr=lc.fmt(c["cart_rate"]), wr=lc.fmt(c["pole_rate"]), drv=lc.fmt(c["drive"]), unit=unit)


def operating_point(c, current_drive):
    x0 = [0.0, c["angle"], c["cart_rate"], c["pole_rate"]]
    if not current_drive:
        w_out = c["cart_rate"] / c["rp"]
        x0.append((c["drive"] - c["pol"] * c["Ke"] * c["N"] * w_out) / c["R"])
    return x0, [c["drive"]]


def reference(model, c, current_drive):
    x0, u0 = operating_point(c, current_drive)
    return lc.reference(model, params(c), x0, u0)


def self_test(models):
    rep = lc.Report("cart-pole rack self-test")
    lc.selftest_dc_motor(rep)
    f, h, xs, us, s = models[True]
    at0 = {p: 0, th: 0, pd: 0, thd: 0, u: 0}

    # 1. Cart-pole, point mass on a massless rod (hand-derived; M = 1,
    #    m = 0.1, l = 0.5, g = 9.81), a horizontal force on the cart as input.
    #    Here: motor massless and frictionless, current drive with
    #    N*eff*Kt/rp = 1, so the generalized force on p is the input itself.
    pm = dict(BASE, slope=0.0, mcart=1.0, mpole=0.1, lcom=0.5, Ipole=0.0, hpiv=0.0, g=9.81,
              c1=0.0, c2=0.0, Jr=0.0, b=0.0, Jload=0.0, Kt=1.0, N=1.0, eff=1.0, rp=1.0)
    ps = {k: lc.to_sym(v) for k, v in params(pm).items()}
    fs = f.subs(ps)
    A = lc.evaluate(fs.jacobian(sp.Matrix(xs)), at0)
    B = lc.evaluate(fs.jacobian(sp.Matrix(us)), at0)
    ev = np.sort(np.linalg.eigvals(A).real)
    lam = math.sqrt((1.0 + 0.1) * 9.81 / (1.0 * 0.5))     # +-sqrt((M+m) g/(M l))
    rep.rel("self-test: point-mass eigenvalues (REF 4)", ev, [-4.6456431201718456, 0, 0,
                                                            4.6456431201718456], 1e-12)
    rep.rel("self-test: +-sqrt((M+m)g/(Ml))", [ev[-1]], [lam], 1e-14)
    # The matrices listed there, state [p, pd, th', thd'] with th' = -th
    # (their angle is positive leaning toward +x, as their B4 = -1/(M l)
    # shows): an explicit change of order and angle sense, T z = x.
    Tm = np.array([[1, 0, 0, 0], [0, 0, -1, 0], [0, 1, 0, 0], [0, 0, 0, -1]], dtype=float)
    Aref = np.array([[0, 1, 0, 0], [0, 0, -0.981, 0], [0, 0, 0, 1], [0, 0, 21.582, 0]])
    Bref = np.array([[0.0], [1.0], [0.0], [-2.0]])
    rep.rel("self-test: A of REF 4 (order, angle sense)", np.linalg.solve(Tm, A @ Tm), Aref, 1e-14)
    rep.rel("self-test: B of REF 4 (order, angle sense)", np.linalg.solve(Tm, B), Bref, 1e-14)
    # Force-to-cart-position transfer function of the point-mass cart-pole,
    #   P(s)/F(s) = (l s^2 - g) / (s^2 (M l s^2 - (M+m) g)),
    # the standard result (e.g. K. Ogata, "Modern Control Engineering";
    # from memory). It does not depend on the sense of the angle. The angle's
    # transfer function is 1/(M l s^2 - (M+m) g) with our counter-clockwise
    # angle (a push toward +x leans the pole toward -x: positive); books that
    # measure the angle clockwise print it with a minus sign.
    Mc, m, l, gg = 1.0, 0.1, 0.5, 9.81
    pts = [0.37j, 1.1 + 2.3j, -3.0 + 0.5j, 7.7j, 20.0 + 5.0j]
    gp = [np.linalg.solve(z * np.eye(4) - A, B)[0, 0] for z in pts]
    ga = [np.linalg.solve(z * np.eye(4) - A, B)[1, 0] for z in pts]
    wp = [(l * z ** 2 - gg) / (z ** 2 * (Mc * l * z ** 2 - (Mc + m) * gg)) for z in pts]
    wa = [1.0 / (Mc * l * z ** 2 - (Mc + m) * gg) for z in pts]
    rep.rel("self-test: P(s)/F(s) point mass", np.array(gp).view(float), np.array(wp).view(float),
            1e-12)
    rep.rel("self-test: Theta(s)/F(s) point mass", np.array(ga).view(float),
            np.array(wa).view(float), 1e-12)

    # 2. Uniform rod, motor inertia reflected: K. J. Astrom and R. M. Murray,
    #    "Feedback Systems" (2008), balance system (from memory):
    #    lambda^2 = M_t m g l_c / (M_t J_t - m^2 l_c^2), M_t = M + m,
    #    J_t = J + m l_c^2, where the cart mass M gains the rotor and pinion
    #    inertia reflected through the gearbox and pinion (common
    #    practice: total inertia at the load J_load + N^2 J_motor),
    #    divided by rp^2 for translation. Motor unpowered (i = u = 0), no
    #    dampers, no friction.
    c = dict(BASE, slope=0.0, c1=0.0, c2=0.0, b=0.0)
    ps = {k: lc.to_sym(v) for k, v in params(c).items()}
    A = lc.evaluate(f.subs(ps).jacobian(sp.Matrix(xs)), at0)
    Mcart = c["mcart"] + (c["Jload"] + c["count"] * c["N"] ** 2 * c["Jr"]) / c["rp"] ** 2
    mm, lc_ = c["mpole"], c["lpole"] / 2
    Jp = mm * c["lpole"] ** 2 / 12
    Mt, Jt = Mcart + mm, Jp + mm * lc_ ** 2
    lam = math.sqrt(Mt * mm * c["g"] * lc_ / (Mt * Jt - (mm * lc_) ** 2))
    rep.rel("self-test: rod + reflected motor root (A&M)", [np.linalg.eigvals(A).real.max()],
            [lam], 1e-12)

    # 3. Upright at rest with no input is a steady state; the tip
    #    accelerometer then reads 0 along the pole's x axis (f = a - g; Titterton
    #    and Weston 2004, from memory).
    ps = {k: lc.to_sym(v) for k, v in params(CASES["voltage"]).items()}
    fv, hv, xv, _, sv = models[False]
    at = {p: 0, th: 0, pd: 0, thd: 0, i: 0, u: 0}
    rep.rel("self-test: f = 0 upright at rest", lc.evaluate(fv.subs(ps), at)[:, 0], np.zeros(5),
            1e-14)
    rep.rel("self-test: tip accel reads 0 at rest", lc.evaluate(hv.subs(ps), at)[3:, 0], [0.0],
            1e-14)
    rep.check("self-test: encoder sign s = +1 (theta_out = p/rp)", s == 1 and sv == 1,
              "s = %d" % s)

    # 4. Both drives share the mechanics: at the same point and the same
    #    current, the voltage model's acceleration rows differentiated by the
    #    current state equal the current model's input column, and the
    #    mechanical blocks agree.
    wv = reference(models[False], dict(CASES["current"], drive=0.0), False)
    wi = reference(models[True], dict(CASES["current"], drive=wv["x0"][4]), True)
    rep.rel("self-test: voltage-model A[:, i] = current-model B", wv["A"][:4, 4:], wi["B"], 1e-13)
    rep.rel("self-test: same mechanics either drive", wv["A"][:4, :4], wi["A"], 1e-13)
    rep.finish()


def main():
    models = {False: derive(False), True: derive(True)}
    if lc.selftest_requested():
        self_test(models)
    exe = lc.rigmat_binary()
    rep = lc.Report("cart-pole rack reference")
    with lc.tmpdir() as tmp:
        for cname, c in CASES.items():
            current = cname == "current"
            js = lc.run_linearize(exe, model_yaml(c, current), tmp, "cartpole-%s.yaml" % cname)
            want = reference(models[current], c, current)
            lc.compare_linearization(rep, "%s drive" % cname, js, STATES_I if current else STATES_V,
                                     INPUTS, OUTPUTS, want)
    rep.finish()


if __name__ == "__main__":
    main()
