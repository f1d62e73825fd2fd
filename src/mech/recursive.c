/* recursive.c - the articulated-body algorithm for the planar body tree
 * (see recursive.h for the method, its cost and its scope).
 *
 * Vectors.  A body's motion is the 3-vector V = (om, vx, vy): its angular
 * rate and the velocity of its origin, in world axes; its acceleration
 * A = (al, ax, ay) likewise (the origin's own acceleration, not the
 * spatial one, which keeps the transport terms of mechanics.c).  A force
 * is F = (n, fx, fy): the moment about the body's origin and the force, so
 * that F . V is power.  A child b placed at u = R(th_p) r from its
 * parent's origin, with joint column s (the child's rate and origin
 * velocity per unit q rate), moves with
 *     V_b = X_b V_p + s_b qd,       A_b = X_b A_p + s_b qdd + c_b,
 *     X_b = [[k, 0, 0], [-uy, 1, 0], [ux, 0, 1]],
 *     c_b = (0, -om_p^2 ux - 2 om_p dy qd, -om_p^2 uy + 2 om_p dx qd),
 * with k = 1, or 0 for a hinge whose angle is measured in the world (the
 * parent's rotation does not carry over), and (dx, dy) the world direction
 * of a slider or rolling joint's travel (0 for a hinge).  A body of mass m
 * and inertia I about its centre of mass at c (world axes, from its
 * origin) has the inertia and velocity-product force
 *     I_b = [[I + m c.c, -m cy, m cx], [-m cy, m, 0], [m cx, 0, m]],
 *     p_b = (0, -m om^2 cx, -m om^2 cy),
 * so that its inertial force is I_b A_b + p_b (Featherstone 2008, chapter
 * 2, in planar form; from memory).  A force's virtual work on V_b gives
 * its share of the generalized forces, the transpose X_b^T carries a force
 * to the parent, and a generalized force along a coordinate (a slider's
 * spring, a linear motor) enters u below as tau.
 *
 * Recursion (Featherstone 2008, Table 7.1; a driven joint's qdd is given,
 * section 9.2):
 *   up the tree, leaves first:  I^A_b = I_b + sum X_c^T I^a_c X_c,
 *       p^A_b = p_b - f_b + sum X_c^T p^a_c over the children c;
 *       free joint:   U = I^A s, D = s.U, u = tau - s.p^A,
 *                     I^a = I^A - U U^T / D, p^a = p^A + I^a c + U u / D;
 *       driven joint: I^a = I^A, p^a = p^A + I^A (c + s qdd);
 *       fixed joint:  I^a = I^A, p^a = p^A + I^A c;
 *   down the tree:  A' = X A_p + c, qdd = (u - U.A') / D, A = A' + s qdd,
 * with the ground at rest (gravity is a force on each body).  X need not be
 * a rigid transform (k = 0): the recursion is the block elimination of
 * M qdd = Q - hb in tree order, which only needs V and A to follow the same
 * linear relation and forces to follow its transpose.
 *
 * Singularity: D is the pivot of that elimination.  As in mechanics.c a
 * pivot at or below RIGMAT_MECH_PIVOT_RTOL times the largest diagonal of
 * M over the free coordinates is refused; the diagonal is s.I^C s with the
 * composite inertia I^C = I_b + sum X_c^T I^C_c X_c (Featherstone 2008,
 * chapter 6), one more pass up the tree.
 *
 * Complex step: every operation is analytic (no cabs, conj or carg; tests
 * on creal only), as DEVELOPERS.md, "Complex-step rules", asks.
 */
#include "recursive.h"
#include "mechanics.h"
#include "kinds.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

struct rigmat_rec {
    rigmat_rec_view v;
    double *kappa;             /* per body: k of X */
    double complex *ux;        /* per body: u (2) */
    double complex *sc;        /* per body: s (3), zero without a coordinate */
    double complex *cb;        /* per body: c (3) */
    double complex *fb;        /* per body: external force (3) */
    double complex *IA, *IC;   /* per body: articulated, composite inertia (9) */
    double complex *pA;        /* per body: articulated bias force (3) */
    double complex *Ub;        /* per body: U (3) */
    double complex *Db, *ub;   /* per body: D, u */
    double complex *acc;       /* per body: acceleration with qdd (3) */
    double complex *tau;       /* per coordinate: generalized force */
};

int rigmat_rec_supported(const rigmat_model *m, const char **why)
{
    size_t i;

    if (m->nclosures > 0) {
        *why = "closed loops reduce the mass matrix to the independent coordinates "
               "(closure.c)";
        return 0;
    }
    /* the kinds this file has its own terms for (kinematics(), forces());
     * a kind added to src/model/kinds.c without them keeps the mass matrix */
    for (i = 0; i < m->njoints; i++)
        if (m->joints[i].type != RIGMAT_JOINT_SLIDER && m->joints[i].type != RIGMAT_JOINT_HINGE &&
                m->joints[i].type != RIGMAT_JOINT_ROLLING && m->joints[i].type != RIGMAT_JOINT_FIXED) {
            *why = "a joint type without a recursive form";
            return 0;
        }
    for (i = 0; i < m->nforces; i++)
        if (m->forces[i].kind != RIGMAT_FORCE_POINT && m->forces[i].kind != RIGMAT_FORCE_TORQUE &&
                m->forces[i].kind != RIGMAT_FORCE_ACROSS) {
            *why = "a force form without a recursive form";
            return 0;
        }
    for (i = 0; i < m->nsprings + m->ndampers; i++) {
        const rigmat_link *lk = i < m->nsprings ? &m->springs[i] : &m->dampers[i - m->nsprings];
        if (lk->attach != RIGMAT_ATTACH_ACROSS && lk->attach != RIGMAT_ATTACH_BETWEEN &&
                lk->attach != RIGMAT_ATTACH_POINTS) {
            *why = "a spring or damper attachment without a recursive form";
            return 0;
        }
    }

    for (i = 0; i < m->nmotors; i++)
        if (m->motors[i].rotor_inertia_kgm2 != 0.0 || m->motors[i].load_inertia_kgm2 != 0.0) {
            *why = "a motor's rotor or load inertia couples its stator body and its output "
                   "coordinate outside the tree";
            return 0;
        }
    for (i = 0; i < m->nsensors; i++)
        if (m->sensors[i].kind == RIGMAT_SENSE_DRIVE_FORCE) {
            *why = "a drive-force sensor reads the row of the mass matrix";
            return 0;
        }
    *why = NULL;
    return 1;
}

void rigmat_rec_free(rigmat_rec *r)
{
    if (r == NULL)
        return;
    free(r->kappa); free(r->ux); free(r->sc); free(r->cb); free(r->fb); free(r->IA);
    free(r->IC); free(r->pA); free(r->Ub); free(r->Db); free(r->ub); free(r->acc);
    free(r->tau);
    free(r);
}

rigmat_rec *rigmat_rec_alloc(const rigmat_rec_view *v)
{
    rigmat_rec *r = calloc(1, sizeof *r);
    const size_t nb = v->nb, n = v->n ? v->n : 1;

    if (r == NULL)
        return NULL;
    r->v = *v;
    r->kappa = calloc(nb, sizeof *r->kappa);
#define CZ(field, count) r->field = calloc((count), sizeof(double complex))
    CZ(ux, 2 * nb); CZ(sc, 3 * nb); CZ(cb, 3 * nb); CZ(fb, 3 * nb); CZ(IA, 9 * nb);
    CZ(IC, 9 * nb); CZ(pA, 3 * nb); CZ(Ub, 3 * nb); CZ(Db, nb); CZ(ub, nb); CZ(acc, 3 * nb);
    CZ(tau, n);
#undef CZ
    if (r->kappa == NULL || r->ux == NULL || r->sc == NULL || r->cb == NULL || r->fb == NULL ||
            r->IA == NULL || r->IC == NULL || r->pA == NULL || r->Ub == NULL || r->Db == NULL ||
            r->ub == NULL || r->acc == NULL || r->tau == NULL) {
        rigmat_rec_free(r);
        return NULL;
    }
    return r;
}

/* ------------------------------------------------------------ kinematics */

/* Positions, velocities and accelerations at qdd = 0 of every body, by the
 * same relations as mechanics.c's kinematics (without the Jacobians), and
 * X, s and c of each body's joint. */
static void kinematics(rigmat_rec *r)
{
    const rigmat_rec_view *v = &r->v;
    const rigmat_model *m = v->m;
    size_t i;

    v->bp[0] = v->bp[1] = 0;
    v->bth[0] = v->bom[0] = v->bal[0] = 0;
    v->bv[0] = v->bv[1] = v->ba[0] = v->ba[1] = 0;
    for (i = 0; i + 1 < v->nb; i++) {
        const size_t b = v->order[i];
        const rigmat_joint *jt = &m->joints[v->bjoint[b]];
        const size_t p = jt->parent, c = v->coord[v->bjoint[b]];
        const rigmat_mech_cs trig = rigmat_mech_cossin(v->bth[p]);
        const double complex cp = trig.c, sp = trig.s;
        const double complex q = c != RIGMAT_NONE ? v->q[c] : 0;
        const double complex qd = c != RIGMAT_NONE ? v->qd[c] : 0;
        const double complex omp = v->bom[p];
        double complex rx = jt->at_m[0], ry = jt->at_m[1], ux, uy, dx = 0, dy = 0, sig = 0;
        double complex *cb = r->cb + 3 * b;

        if (c != RIGMAT_NONE && jt->type == RIGMAT_JOINT_SLIDER) {
            rx += q * jt->axis[0];
            ry += q * jt->axis[1];
            dx = cp * jt->axis[0] - sp * jt->axis[1];
            dy = sp * jt->axis[0] + cp * jt->axis[1];
        } else if (c != RIGMAT_NONE && jt->type == RIGMAT_JOINT_ROLLING) {
            /* the wheel's centre a radius above the contact line, travelling
             * with q along the parent's x */
            rx += q;
            ry += jt->radius_m;
            dx = cp;
            dy = sp;
        }
        ux = cp * rx - sp * ry;
        uy = sp * rx + cp * ry;
        r->ux[2 * b] = ux;
        r->ux[2 * b + 1] = uy;
        v->bp[2 * b] = v->bp[2 * p] + ux;
        v->bp[2 * b + 1] = v->bp[2 * p + 1] + uy;
        v->bv[2 * b] = v->bv[2 * p] - omp * uy + dx * qd;
        v->bv[2 * b + 1] = v->bv[2 * p + 1] + omp * ux + dy * qd;
        cb[0] = 0;
        cb[1] = -omp * omp * ux - 2.0 * omp * dy * qd;
        cb[2] = -omp * omp * uy + 2.0 * omp * dx * qd;
        r->kappa[b] = 1.0;
        v->bth[b] = v->bth[p] + jt->angle_rad;
        v->bom[b] = omp;
        if (c != RIGMAT_NONE && jt->type == RIGMAT_JOINT_HINGE) {
            sig = 1.0;
            if (jt->reference_world) {
                /* absolute angle: the parent's rotation does not carry over */
                r->kappa[b] = 0.0;
                v->bth[b] = jt->angle_rad + q;
                v->bom[b] = qd;
            } else {
                v->bth[b] += q;
                v->bom[b] += qd;
            }
        } else if (c != RIGMAT_NONE && jt->type == RIGMAT_JOINT_ROLLING) {
            /* rolling without slip: travel q turns the wheel by -q / radius */
            sig = -1.0 / jt->radius_m;
            v->bth[b] -= q / jt->radius_m;
            v->bom[b] -= qd / jt->radius_m;
        }
        r->sc[3 * b] = sig;
        r->sc[3 * b + 1] = dx;
        r->sc[3 * b + 2] = dy;
        /* A0_b = X A0_p + c */
        v->bal[b] = r->kappa[b] * v->bal[p];
        v->ba[2 * b] = v->ba[2 * p] - v->bal[p] * uy + cb[1];
        v->ba[2 * b + 1] = v->ba[2 * p + 1] + v->bal[p] * ux + cb[2];
    }
}

/* ---------------------------------------------------------------- forces */

/* a force (fx, fy) at world point (px, py) on body b */
static void add_point_force(rigmat_rec *r, size_t b, double complex px, double complex py,
        double complex fx, double complex fy)
{
    const rigmat_rec_view *v = &r->v;
    double complex *f = r->fb + 3 * b;
    const double complex rx = px - v->bp[2 * b], ry = py - v->bp[2 * b + 1];

    f[0] += rx * fy - ry * fx;
    f[1] += fx;
    f[2] += fy;
}

/* a world point of body b at at (body frame): position and velocity */
static void point(const rigmat_rec *r, size_t b, const double at[2], double complex p[2],
        double complex vel[2])
{
    const rigmat_rec_view *v = &r->v;
    const rigmat_mech_cs trig = rigmat_mech_cossin(v->bth[b]);
    const double complex c = trig.c, sn = trig.s, om = v->bom[b];
    const double complex ux = c * at[0] - sn * at[1], uy = sn * at[0] + c * at[1];

    p[0] = v->bp[2 * b] + ux;
    p[1] = v->bp[2 * b + 1] + uy;
    if (vel != NULL) {
        vel[0] = v->bv[2 * b] - om * uy;
        vel[1] = v->bv[2 * b + 1] + om * ux;
    }
}

/* A generalized force w along the relative motion of joint j, as
 * mechanics.c's joint_rel row: a rotational joint's relative angle takes
 * a torque pair (child +w, parent -w); a slider's coordinate takes w. */
static void across(rigmat_rec *r, size_t j, double complex w)
{
    const rigmat_joint *jt = &r->v.m->joints[j];
    const size_t c = r->v.coord[j];

    if (rigmat_joint_kind(jt->type)->rotational) {
        r->fb[3 * jt->child] += w;
        r->fb[3 * jt->parent] -= w;
    } else if (c != RIGMAT_NONE) {
        r->tau[c] += w;
    }
}

/* value and rate of the relative motion of joint j (mechanics.c's
 * joint_rel without the row) */
static void across_value(const rigmat_rec *r, size_t j, double complex *val,
        double complex *rate)
{
    const rigmat_rec_view *v = &r->v;
    const rigmat_joint *jt = &v->m->joints[j];
    const size_t c = v->coord[j];

    if (rigmat_joint_kind(jt->type)->rotational) {
        *val = v->bth[jt->child] - v->bth[jt->parent] - jt->angle_rad;
        *rate = v->bom[jt->child] - v->bom[jt->parent];
        return;
    }
    *val = c != RIGMAT_NONE ? v->q[c] : 0;
    *rate = c != RIGMAT_NONE ? v->qd[c] : 0;
}

static double complex motor_voltage(const rigmat_motor *mo, double complex u)
{
    return rigmat_drive_kind_desc(mo->drive)->needs_supply ? u * mo->supply_v : u;
}

/* Every force of the model into fb (per body) and tau (per coordinate);
 * the motors' output rates and currents into the view. */
static rigmat_status forces(rigmat_rec *r, rigmat_error *err)
{
    const rigmat_rec_view *v = &r->v;
    const rigmat_model *m = v->m;
    const double gx = -m->gravity_m_s2 * sin(m->slope_rad);
    const double gy = -m->gravity_m_s2 * cos(m->slope_rad);
    size_t b, i;

    for (i = 0; i < 3 * v->nb; i++)
        r->fb[i] = 0;
    for (i = 0; i < v->n; i++)
        r->tau[i] = 0;
    for (b = 1; b < v->nb; b++) {
        const rigmat_body *bd = &m->bodies[b];
        double complex pc[2];
        if (bd->mass_kg == 0.0)
            continue;
        point(r, b, bd->com_m, pc, NULL);
        add_point_force(r, b, pc[0], pc[1], bd->mass_kg * gx, bd->mass_kg * gy);
    }
    for (i = 0; i < m->nmotors; i++) {
        const rigmat_motor *mo = &m->motors[i];
        const double N = mo->gear_ratio, cnt = (double)mo->count;
        const double complex u = v->ueff[v->umot[i]], volt = motor_voltage(mo, u);
        double complex w, tau;

        w = v->mlin[i] != RIGMAT_NONE ? v->mk[i] * v->qd[v->mlin[i]] :
                                        v->bom[v->mrotor[i]] - v->bom[v->mstator[i]];
        v->wout[i] = w;
        if (!rigmat_drive_kind_desc(mo->drive)->has_current_state)
            v->cur[i] = u; /* the drive sets the current */
        else if (mo->inductance_neglected)
            v->cur[i] = (volt - mo->polarity * mo->back_emf_v_s_rad * N * w) / mo->resistance_ohm;
        tau = cnt * (mo->polarity * mo->efficiency * mo->torque_constant_nm_a * v->cur[i] -
                            mo->friction_nm_s_rad * N * w);
        if (v->mlin[i] != RIGMAT_NONE) {
            r->tau[v->mlin[i]] += N * tau * v->mk[i];
        } else {
            r->fb[3 * v->mrotor[i]] += N * tau;
            r->fb[3 * v->mstator[i]] -= N * tau;
        }
    }
    for (i = 0; i < m->nsprings + m->ndampers; i++) {
        const int spring = i < m->nsprings;
        const rigmat_link *lk = spring ? &m->springs[i] : &m->dampers[i - m->nsprings];
        double complex val, rate, gen;

        if (lk->attach == RIGMAT_ATTACH_ACROSS) {
            across_value(r, lk->joint, &val, &rate);
            gen = spring ? -lk->stiffness * (val - lk->rest) : -lk->coefficient * rate;
            across(r, lk->joint, gen);
        } else if (lk->attach == RIGMAT_ATTACH_BETWEEN) {
            val = v->bth[lk->body_b] - v->bth[lk->body_a];
            rate = v->bom[lk->body_b] - v->bom[lk->body_a];
            gen = spring ? -lk->stiffness * (val - lk->rest) : -lk->coefficient * rate;
            r->fb[3 * lk->body_b] += gen;
            r->fb[3 * lk->body_a] -= gen;
        } else {
            double complex pa[2], pb[2], va[2], vb[2], ex, ey;
            rigmat_status lst;
            point(r, lk->body_a, lk->point_a_m, pa, va);
            point(r, lk->body_b, lk->point_b_m, pb, vb);
            lst = rigmat_mech_link_line(lk, spring, pa, pb, va, vb, &ex, &ey, &val, &rate, err);
            if (lst != RIGMAT_OK)
                return lst;
            gen = spring ? -lk->stiffness * (val - lk->rest) : -lk->coefficient * rate;
            add_point_force(r, lk->body_b, pb[0], pb[1], gen * ex, gen * ey);
            add_point_force(r, lk->body_a, pa[0], pa[1], -gen * ex, -gen * ey);
        }
    }
    for (i = 0; i < m->nforces; i++) {
        const rigmat_force *fo = &m->forces[i];
        const double complex w = v->ueff[v->ufor[i]];
        if (fo->kind == RIGMAT_FORCE_POINT) {
            double complex p[2], fx = w * fo->direction[0], fy = w * fo->direction[1];
            point(r, fo->body, fo->at_m, p, NULL);
            if (fo->frame_body) {
                const rigmat_mech_cs trig = rigmat_mech_cossin(v->bth[fo->body]);
                const double complex c = trig.c, sn = trig.s;
                fx = c * (w * fo->direction[0]) - sn * (w * fo->direction[1]);
                fy = sn * (w * fo->direction[0]) + c * (w * fo->direction[1]);
            }
            add_point_force(r, fo->body, p[0], p[1], fx, fy);
        } else if (fo->kind == RIGMAT_FORCE_TORQUE) {
            r->fb[3 * fo->body] += w;
            if (fo->reacting != RIGMAT_NONE)
                r->fb[3 * fo->reacting] -= w;
        } else {
            across(r, fo->joint, w);
        }
    }
    return RIGMAT_OK;
}

/* ------------------------------------------------------------- recursion */

/* the inertia (9, row-major) of body b in world axes at its origin and its
 * velocity-product force (3) */
static void body_inertia(const rigmat_rec *r, size_t b, double complex Ib[9], double complex p[3])
{
    const rigmat_rec_view *v = &r->v;
    const rigmat_body *bd = &v->m->bodies[b];
    const double ms = bd->mass_kg;
    const rigmat_mech_cs trig = rigmat_mech_cossin(v->bth[b]);
    const double complex c = trig.c, sn = trig.s, om = v->bom[b];
    const double complex cx = c * bd->com_m[0] - sn * bd->com_m[1];
    const double complex cy = sn * bd->com_m[0] + c * bd->com_m[1];

    Ib[0] = bd->inertia_kgm2 + ms * (cx * cx + cy * cy);
    Ib[1] = Ib[3] = -ms * cy;
    Ib[2] = Ib[6] = ms * cx;
    Ib[4] = Ib[8] = ms;
    Ib[5] = Ib[7] = 0;
    p[0] = 0;
    p[1] = -ms * om * om * cx;
    p[2] = -ms * om * om * cy;
}

/* P += X^T S X for X = [[k, 0, 0], [-uy, 1, 0], [ux, 0, 1]] and symmetric S */
static void add_transported(double complex P[9], const double complex S[9], double k,
        double complex ux, double complex uy)
{
    /* T = S X, column by column: X's columns are (k, -uy, ux), e2, e3 */
    double complex T[9];
    size_t i;

    for (i = 0; i < 3; i++) {
        T[3 * i] = k * S[3 * i] - uy * S[3 * i + 1] + ux * S[3 * i + 2];
        T[3 * i + 1] = S[3 * i + 1];
        T[3 * i + 2] = S[3 * i + 2];
    }
    /* P += X^T T: X^T's rows are (k, -uy, ux), e2, e3 */
    for (i = 0; i < 3; i++) {
        P[i] += k * T[i] - uy * T[3 + i] + ux * T[6 + i];
        P[3 + i] += T[3 + i];
        P[6 + i] += T[6 + i];
    }
}

/* f += X^T g */
static void add_transported_force(double complex f[3], const double complex g[3], double k,
        double complex ux, double complex uy)
{
    f[0] += k * g[0] - uy * g[1] + ux * g[2];
    f[1] += g[1];
    f[2] += g[2];
}

static void mat3_vec(const double complex M[9], const double complex x[3], double complex y[3])
{
    y[0] = M[0] * x[0] + M[1] * x[1] + M[2] * x[2];
    y[1] = M[3] * x[0] + M[4] * x[1] + M[5] * x[2];
    y[2] = M[6] * x[0] + M[7] * x[1] + M[8] * x[2];
}

static rigmat_status pivot_error(const rigmat_rec *r, size_t c, double piv, double dmax,
        rigmat_error *err)
{
    const rigmat_joint *jt = &r->v.m->joints[r->v.cjoint[c]];

    if (!isfinite(piv)) {
        (void)RIGMAT_FAIL(err, RIGMAT_ENUMERIC,
                "the inertia seen by joint '%s' overflows (%g): a mass or inertia beyond "
                "double range", jt->name, piv);
        rigmat_error_hint(err, "check the masses and inertias of the bodies it moves");
    } else {
        (void)RIGMAT_FAIL(err, RIGMAT_ENUMERIC,
                "the mass matrix is singular: the motion of joint '%s' has no inertia of its "
                "own (pivot %.3g of the largest diagonal, condition estimate %.3g)", jt->name,
                dmax > 0.0 ? piv / dmax : 0.0, piv > 0.0 ? dmax / piv : HUGE_VAL);
        rigmat_error_hint(err, "give the bodies it moves a mass or an inertia, or drive the "
                               "joint");
    }
    if (err != NULL)
        err->where = jt->loc;
    return RIGMAT_ENUMERIC;
}

rigmat_status rigmat_rec_eval(rigmat_rec *r, rigmat_error *err)
{
    const rigmat_rec_view *v = &r->v;
    const rigmat_model *m = v->m;
    const size_t nb = v->nb;
    double dmax = 0.0;
    rigmat_status st;
    size_t i, k;

    kinematics(r);
    st = forces(r, err);
    if (st != RIGMAT_OK)
        return st;

    /* up the tree: body inertias, composite inertias, largest diagonal */
    for (i = 0; i < 9 * nb; i++)
        r->IA[i] = r->IC[i] = 0;
    for (i = 0; i < 3 * nb; i++)
        r->pA[i] = 0;
    for (k = nb - 1; k-- > 0;) {
        const size_t b = v->order[k];
        const rigmat_joint *jt = &m->joints[v->bjoint[b]];
        const size_t c = v->coord[v->bjoint[b]];
        double complex Ib[9], p[3];
        body_inertia(r, b, Ib, p);
        for (i = 0; i < 9; i++) {
            r->IC[9 * b + i] += Ib[i];
            r->IA[9 * b + i] += Ib[i];
        }
        for (i = 0; i < 3; i++)
            r->pA[3 * b + i] += p[i] - r->fb[3 * b + i];
        if (c != RIGMAT_NONE && jt->driven == RIGMAT_DRIVEN_NONE) {
            double complex Is[3];
            mat3_vec(r->IC + 9 * b, r->sc + 3 * b, Is);
            {
                const double diag = creal(r->sc[3 * b] * Is[0] + r->sc[3 * b + 1] * Is[1] +
                        r->sc[3 * b + 2] * Is[2]);
                if (diag > dmax || !isfinite(diag))
                    dmax = isfinite(diag) ? diag : HUGE_VAL;
            }
        }
        if (jt->parent != 0)
            add_transported(r->IC + 9 * jt->parent, r->IC + 9 * b, r->kappa[b], r->ux[2 * b],
                    r->ux[2 * b + 1]);
    }

    /* up the tree: articulated inertias and bias forces */
    for (k = nb - 1; k-- > 0;) {
        const size_t b = v->order[k];
        const rigmat_joint *jt = &m->joints[v->bjoint[b]];
        const size_t c = v->coord[v->bjoint[b]], p = jt->parent;
        double complex *IA = r->IA + 9 * b, *pA = r->pA + 3 * b, *s = r->sc + 3 * b;
        double complex *cb = r->cb + 3 * b, cq[3], Ic[3], pa[3];

        for (i = 0; i < 3; i++)
            cq[i] = cb[i];
        if (c != RIGMAT_NONE && jt->driven != RIGMAT_DRIVEN_NONE)
            for (i = 0; i < 3; i++)
                cq[i] += s[i] * v->qdd[c];
        if (c != RIGMAT_NONE && jt->driven == RIGMAT_DRIVEN_NONE) {
            double complex *U = r->Ub + 3 * b, D, u;
            double piv;
            mat3_vec(IA, s, U);
            D = s[0] * U[0] + s[1] * U[1] + s[2] * U[2];
            piv = creal(D);
            if (!isfinite(piv) || !(piv > RIGMAT_MECH_PIVOT_RTOL * dmax))
                return pivot_error(r, c, piv, dmax, err);
            u = r->tau[c] - (s[0] * pA[0] + s[1] * pA[1] + s[2] * pA[2]);
            r->Db[b] = D;
            r->ub[b] = u;
            /* I^a = I^A - U U^T / D (in place: I^A is not needed after) */
            for (i = 0; i < 9; i++)
                IA[i] -= U[i / 3] * U[i % 3] / D;
            mat3_vec(IA, cq, Ic);
            for (i = 0; i < 3; i++)
                pa[i] = pA[i] + Ic[i] + U[i] * u / D;
        } else {
            mat3_vec(IA, cq, Ic);
            for (i = 0; i < 3; i++)
                pa[i] = pA[i] + Ic[i];
        }
        if (p != 0) {
            add_transported(r->IA + 9 * p, IA, r->kappa[b], r->ux[2 * b], r->ux[2 * b + 1]);
            add_transported_force(r->pA + 3 * p, pa, r->kappa[b], r->ux[2 * b],
                    r->ux[2 * b + 1]);
        }
    }

    /* down the tree: accelerations and the free qdd */
    r->acc[0] = r->acc[1] = r->acc[2] = 0;
    for (k = 0; k + 1 < nb; k++) {
        const size_t b = v->order[k];
        const rigmat_joint *jt = &m->joints[v->bjoint[b]];
        const size_t c = v->coord[v->bjoint[b]], p = jt->parent;
        const double complex *Ap = r->acc + 3 * p, *s = r->sc + 3 * b, *cb = r->cb + 3 * b;
        const double complex ux = r->ux[2 * b], uy = r->ux[2 * b + 1];
        double complex *A = r->acc + 3 * b;

        A[0] = r->kappa[b] * Ap[0] + cb[0];
        A[1] = Ap[1] - uy * Ap[0] + cb[1];
        A[2] = Ap[2] + ux * Ap[0] + cb[2];
        if (c == RIGMAT_NONE)
            continue;
        if (jt->driven == RIGMAT_DRIVEN_NONE) {
            const double complex *U = r->Ub + 3 * b;
            v->qdd[c] = (r->ub[b] - (U[0] * A[0] + U[1] * A[1] + U[2] * A[2])) / r->Db[b];
        }
        for (i = 0; i < 3; i++)
            A[i] += s[i] * v->qdd[c];
    }
    return RIGMAT_OK;
}

void rigmat_rec_point_accel(const rigmat_rec *r, size_t b, const double at_m[2],
        double complex a[2])
{
    const rigmat_rec_view *v = &r->v;
    const rigmat_mech_cs trig = rigmat_mech_cossin(v->bth[b]);
    const double complex c = trig.c, sn = trig.s, om = v->bom[b];
    const double complex ux = c * at_m[0] - sn * at_m[1], uy = sn * at_m[0] + c * at_m[1];
    const double complex *A = r->acc + 3 * b;

    a[0] = A[1] - A[0] * uy - om * om * ux;
    a[1] = A[2] + A[0] * ux - om * om * uy;
}
