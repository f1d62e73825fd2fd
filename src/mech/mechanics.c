/* mechanics.c - planar kinematics and dynamics of the body tree in complex
 * arithmetic (see mechanics.h for the method and the complex-step rules).
 *
 * Frames: a body's frame sits at its joint; R(th) rotates body coordinates
 * into the world; S = [[0, -1], [1, 0]] is d R / d th times R^-1.  For each
 * body we keep its origin p, angle th, the Jacobians dp/dq (2 x n) and
 * dth/dq (1 x n), the velocities v, om and the accelerations at qdd = 0
 * (a, al: the velocity-product terms Jdot qd, jdot qd).  A child placed at
 * r (parent frame) from its parent's origin has
 *     p  = p_p + R r,            J = J_p + S R r j_p (+ R dr/dq e_q),
 *     a  = a_p + al_p S R r - om_p^2 R r (+ 2 om_p S R dr/dq qd),
 * the planar form of the usual rigid-body transport (Featherstone, Rigid
 * Body Dynamics Algorithms, 2008, chapter 2; from memory).
 *
 * Rolling joint sign, worked: radius 0.061 m, q = +0.1 m of travel: the
 * centre moves +0.1 m along the parent's x and the wheel turns by
 * -0.1/0.061 = -1.64 rad (clockwise), as README.md ("Signs and frames") states.
 */
#include "invariant.h"
#include "mechanics.h"
#include "recursive.h"
#include "layout.h"
#include "kinds.h"
#include "closure.h"

#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_math.h>

/* x + i y with the signs of zeros kept (x + I * y would add +0 to x);
 * C99 6.2.5: a complex has the representation of an array of two reals. */
static double complex cpair(double x, double y)
{
    double complex z;
    double *p = (double *)&z;

    p[0] = x;
    p[1] = y;
    return z;
}

rigmat_mech_cs rigmat_mech_cossin(double complex z)
{
    const double x = creal(z), y = cimag(z), ax = fabs(x);
    rigmat_mech_cs r;
    double sx, cx;

    if (!(fabs(y) < 0x1p-28) || !isfinite(x)) {
        r.c = ccos(z);
        r.s = csin(z);
        return r;
    }
    /* on |x| and signed after, as the library's csin does (sin is odd and
     * cos even exactly); with GCC one sincos call, the one the library's
     * csin makes (strict C99 does not declare sincos; Clang has no such
     * builtin and pairs sin and cos itself) */
    if (ax > DBL_MIN) {
#if defined(__GNUC__) && !defined(__clang__)
        __builtin_sincos(ax, &sx, &cx);
#else
        sx = sin(ax);
        cx = cos(ax);
#endif
    } else {
        sx = ax;
        cx = 1.0;
    }
    if (signbit(x))
        sx = -sx;
    r.c = cpair(cx, -y * sx);
    r.s = cpair(sx, y * cx);
    return r;
}

/* complex step size: far below the square root of the machine epsilon, with no
 * subtraction to lose digits (J. R. R. A. Martins, P. Sturdza, J. J. Alonso,
 * "The complex-step derivative approximation", ACM TOMS 29(3), 2003) */
static const double step_h = 1e-20;

struct rigmat_mech {
    const rigmat_model *m;
    rigmat_layout canon;
    size_t n, nb, nf;
    size_t *coord;   /* per joint: coordinate or RIGMAT_NONE (fixed) */
    size_t *cjoint;  /* per coordinate: joint */
    size_t *order;   /* non-ground bodies, parents first */
    size_t *bjoint;  /* per body: its joint (RIGMAT_NONE for ground) */
    size_t *xq, *xr, *uq; /* per coordinate: q state, rate state, driven input */
    size_t *freec;   /* the free coordinates, nf of them */
    size_t *xi, *umot; /* per motor: current state (or NONE), input */
    size_t *ufor;    /* per force: input */
    size_t *xsh;     /* per input: shaping state or NONE */
    size_t *xbias, *ubias; /* per sensor: bias state and its noise input, or NONE */
    size_t *xfilt, *ufilt; /* per sensor: filter state and its noise input, or NONE */
    /* motors: rotary (stator, rotor bodies) or linear (coordinate, k) */
    size_t *mstator, *mrotor, *mlin;
    double *mk;      /* linear: output rad per m of travel; 0 for rotary */
    double *msign;   /* motor_angle sign: +1 or -1 */
    double *mtheta0; /* theta_out at q = 0 */
    /* workspace, all complex */
    double complex *bp, *bth, *bJ, *bjth, *bv, *bom, *ba, *bal;
    double complex *q, *qd, *qdd, *M, *hb, *Q, *ueff, *LU, *rhs;
    double complex *tJa, *tJb, *tj, *jout, *cur, *wout, *bout;
    size_t *perm;
    double complex *xc, *uc, *fc, *yc;
    double *fr; /* real f, canonical */
    rigmat_rec *rec; /* the O(N) path (recursive.c) when chosen, else NULL */
    rigmat_closure_ws *cl; /* closed loops (closure.c), or NULL */
};

#define BJ(s, b, k, c) ((s)->bJ[((b) * 2 + (k)) * (s)->n + (c)])
#define BJTH(s, b, c) ((s)->bjth[(b) * (s)->n + (c)])

const rigmat_layout *rigmat_mech_canonical(const rigmat_mech *s)
{
    return &s->canon;
}

void rigmat_mech_free(rigmat_mech *s)
{
    if (s == NULL)
        return;
    rigmat_layout_release(&s->canon);
    rigmat_closure_free(s->cl);
    free(s->coord); free(s->cjoint); free(s->order); free(s->bjoint);
    free(s->xq); free(s->xr); free(s->uq); free(s->freec);
    free(s->xi); free(s->umot); free(s->ufor); free(s->xsh);
    free(s->xbias); free(s->ubias); free(s->xfilt); free(s->ufilt);
    free(s->mstator); free(s->mrotor); free(s->mlin); free(s->mk); free(s->msign);
    free(s->mtheta0);
    free(s->bp); free(s->bth); free(s->bJ); free(s->bjth); free(s->bv); free(s->bom);
    free(s->ba); free(s->bal);
    free(s->q); free(s->qd); free(s->qdd); free(s->M); free(s->hb); free(s->Q);
    free(s->ueff); free(s->LU); free(s->rhs);
    free(s->tJa); free(s->tJb); free(s->tj); free(s->jout); free(s->cur); free(s->wout);
    free(s->bout); free(s->perm);
    free(s->xc); free(s->uc); free(s->fc); free(s->yc); free(s->fr);
    rigmat_rec_free(s->rec);
    free(s);
}

static void *zalloc(size_t n, size_t size, int *bad)
{
    void *p = calloc(n ? n : 1, size);
    if (p == NULL)
        *bad = 1;
    return p;
}

static size_t *idx_alloc(size_t n, int *bad)
{
    size_t *p = zalloc(n, sizeof *p, bad), i;
    if (p != NULL)
        for (i = 0; i < n; i++)
            p[i] = RIGMAT_NONE;
    return p;
}

/* ------------------------------------------------------------ kinematics */

/* R(th) r and S R(th) r for complex th and r. */
static void rot(double complex c, double complex sn, double complex rx, double complex ry,
        double complex *ox, double complex *oy)
{
    *ox = c * rx - sn * ry;
    *oy = sn * rx + c * ry;
}

/* ------------------------------------------- joint types: kinematics */

/* Behaviour of each joint type (the table below, indexed by
 * rigmat_joint_type like src/model/kinds.c):
 *   translate: the child's origin offset in the parent frame at q (added to
 *     r) and dr/dq in d (parent frame); returns 1 when the coordinate moves
 *     the origin, 0 when it does not (then r and d are left alone);
 *   turn: the child's angle, its Jacobian row and its rate and angular
 *     acceleration at qdd = 0 from the coordinate (the parent's are
 *     already in place); NULL when the coordinate does not turn the child. */
struct joint_mech {
    int (*translate)(const rigmat_joint *jt, double complex q, double complex *rx,
            double complex *ry, double d[2]);
    void (*turn)(rigmat_mech *s, size_t b, const rigmat_joint *jt, size_t c, double complex q,
            double complex qd);
};

static int slider_translate(const rigmat_joint *jt, double complex q, double complex *rx,
        double complex *ry, double d[2])
{
    *rx += q * jt->axis[0];
    *ry += q * jt->axis[1];
    d[0] = jt->axis[0];
    d[1] = jt->axis[1];
    return 1;
}

/* rolling: the wheel's centre sits a radius above the contact line and
 * travels with q along the parent's x */
static int rolling_translate(const rigmat_joint *jt, double complex q, double complex *rx,
        double complex *ry, double d[2])
{
    *rx += q;
    *ry += jt->radius_m;
    d[0] = 1.0;
    d[1] = 0.0;
    return 1;
}

static void hinge_turn(rigmat_mech *s, size_t b, const rigmat_joint *jt, size_t c,
        double complex q, double complex qd)
{
    size_t col;

    if (jt->reference_world) {
        /* absolute angle: the parent's rotation does not carry over */
        s->bth[b] = jt->angle_rad + q;
        for (col = 0; col < s->n; col++)
            BJTH(s, b, col) = 0;
        s->bom[b] = 0;
        s->bal[b] = 0;
    } else {
        s->bth[b] += q;
    }
    BJTH(s, b, c) += 1.0;
    s->bom[b] += qd;
}

/* rolling without slip: travel q turns the wheel by -q / radius */
static void rolling_turn(rigmat_mech *s, size_t b, const rigmat_joint *jt, size_t c,
        double complex q, double complex qd)
{
    s->bth[b] -= q / jt->radius_m;
    BJTH(s, b, c) -= 1.0 / jt->radius_m;
    s->bom[b] -= qd / jt->radius_m;
}

static const struct joint_mech joint_mech[RIGMAT_NJOINT_TYPES] = {
    [RIGMAT_JOINT_SLIDER] = { slider_translate, NULL },
    [RIGMAT_JOINT_HINGE] = { NULL, hinge_turn },
    [RIGMAT_JOINT_ROLLING] = { rolling_translate, rolling_turn },
    [RIGMAT_JOINT_FIXED] = { NULL, NULL },
};

static void kinematics(rigmat_mech *s)
{
    const rigmat_model *m = s->m;
    const size_t n = s->n;
    size_t i, k, col;

    /* ground (body 0) at rest at the origin */
    s->bp[0] = s->bp[1] = 0;
    s->bth[0] = s->bom[0] = s->bal[0] = 0;
    s->bv[0] = s->bv[1] = s->ba[0] = s->ba[1] = 0;
    for (col = 0; col < n; col++) {
        BJ(s, 0, 0, col) = BJ(s, 0, 1, col) = 0;
        BJTH(s, 0, col) = 0;
    }
    for (i = 0; i < s->nb - 1; i++) {
        const size_t b = s->order[i];
        const rigmat_joint *jt = &m->joints[s->bjoint[b]];
        const size_t p = jt->parent, c = s->coord[s->bjoint[b]];
        const rigmat_mech_cs trig = rigmat_mech_cossin(s->bth[p]);
        const double complex cp = trig.c, sp = trig.s;
        const double complex q = c != RIGMAT_NONE ? s->q[c] : 0;
        const double complex qd = c != RIGMAT_NONE ? s->qd[c] : 0;
        const double complex omp = s->bom[p];
        const struct joint_mech *jm = &joint_mech[jt->type];
        double complex rx = jt->at_m[0], ry = jt->at_m[1], ux, uy, dx = 0, dy = 0;
        double d[2];
        int moves = 0; /* translation along dr/dq */

        if (c != RIGMAT_NONE && jm->translate != NULL) {
            moves = jm->translate(jt, q, &rx, &ry, d);
            if (moves)
                rot(cp, sp, d[0], d[1], &dx, &dy);
        }
        rot(cp, sp, rx, ry, &ux, &uy);
        /* S R r = (-uy, ux) */
        s->bp[2 * b] = s->bp[2 * p] + ux;
        s->bp[2 * b + 1] = s->bp[2 * p + 1] + uy;
        for (col = 0; col < n; col++) {
            BJ(s, b, 0, col) = BJ(s, p, 0, col) - uy * BJTH(s, p, col);
            BJ(s, b, 1, col) = BJ(s, p, 1, col) + ux * BJTH(s, p, col);
            BJTH(s, b, col) = BJTH(s, p, col);
        }
        s->bv[2 * b] = s->bv[2 * p] - omp * uy;
        s->bv[2 * b + 1] = s->bv[2 * p + 1] + omp * ux;
        s->ba[2 * b] = s->ba[2 * p] - s->bal[p] * uy - omp * omp * ux;
        s->ba[2 * b + 1] = s->ba[2 * p + 1] + s->bal[p] * ux - omp * omp * uy;
        s->bth[b] = s->bth[p] + jt->angle_rad;
        s->bom[b] = omp;
        s->bal[b] = s->bal[p];
        if (moves) {
            BJ(s, b, 0, c) += dx;
            BJ(s, b, 1, c) += dy;
            s->bv[2 * b] += dx * qd;
            s->bv[2 * b + 1] += dy * qd;
            s->ba[2 * b] += -2.0 * omp * dy * qd;
            s->ba[2 * b + 1] += 2.0 * omp * dx * qd;
        }
        if (c != RIGMAT_NONE && jm->turn != NULL)
            jm->turn(s, b, jt, c, q, qd);
        (void)k;
    }
}

/* A point fixed in body b at r (body frame): position, Jacobian (2 x n,
 * row-major; may be NULL), velocity and acceleration at qdd = 0 (may be
 * NULL). */
static void point_kin(const rigmat_mech *s, size_t b, const double r[2], double complex p[2],
        double complex *J, double complex v[2], double complex a[2])
{
    const rigmat_mech_cs trig = rigmat_mech_cossin(s->bth[b]);
    const double complex c = trig.c, sn = trig.s, om = s->bom[b];
    double complex ux, uy;
    size_t col;

    rot(c, sn, r[0], r[1], &ux, &uy);
    if (p != NULL) {
        p[0] = s->bp[2 * b] + ux;
        p[1] = s->bp[2 * b + 1] + uy;
    }
    if (J != NULL)
        for (col = 0; col < s->n; col++) {
            J[col] = BJ(s, b, 0, col) - uy * BJTH(s, b, col);
            J[s->n + col] = BJ(s, b, 1, col) + ux * BJTH(s, b, col);
        }
    if (v != NULL) {
        v[0] = s->bv[2 * b] - om * uy;
        v[1] = s->bv[2 * b + 1] + om * ux;
    }
    if (a != NULL) {
        a[0] = s->ba[2 * b] - s->bal[b] * uy - om * om * ux;
        a[1] = s->ba[2 * b + 1] + s->bal[b] * ux - om * om * uy;
    }
}

/* The relative displacement across joint j (slider, rolling: q; hinge:
 * child angle - parent angle - angle, whatever its reference): value, its
 * Jacobian row js (length n), its rate and its acceleration at qdd = 0. */
static void joint_rel(const rigmat_mech *s, size_t j, double complex *val, double complex *js,
        double complex *rate, double complex *bias)
{
    const rigmat_joint *jt = &s->m->joints[j];
    const size_t c = s->coord[j];
    size_t col;

    if (rigmat_joint_kind(jt->type)->rotational) {
        const size_t ch = jt->child, pa = jt->parent;
        *val = s->bth[ch] - s->bth[pa] - jt->angle_rad;
        for (col = 0; col < s->n; col++)
            js[col] = BJTH(s, ch, col) - BJTH(s, pa, col);
        *rate = s->bom[ch] - s->bom[pa];
        *bias = s->bal[ch] - s->bal[pa];
        return;
    }
    for (col = 0; col < s->n; col++)
        js[col] = 0;
    *val = *rate = *bias = 0;
    if (c == RIGMAT_NONE)
        return;
    js[c] = 1.0;
    *val = s->q[c];
    *rate = s->qd[c];
}

/* Relative output rotation of motor i: theta_out, its row jout, rate and
 * velocity-product acceleration. */
static void motor_out(const rigmat_mech *s, size_t i, double complex *theta, double complex *jo,
        double complex *rate, double complex *bias)
{
    size_t col;

    if (s->mlin[i] != RIGMAT_NONE) {
        const size_t c = s->mlin[i];
        for (col = 0; col < s->n; col++)
            jo[col] = 0;
        jo[c] = s->mk[i];
        *theta = s->mk[i] * s->q[c];
        *rate = s->mk[i] * s->qd[c];
        *bias = 0;
        return;
    }
    {
        const size_t st = s->mstator[i], ro = s->mrotor[i];
        for (col = 0; col < s->n; col++)
            jo[col] = BJTH(s, ro, col) - BJTH(s, st, col);
        *theta = s->bth[ro] - s->bth[st];
        *rate = s->bom[ro] - s->bom[st];
        *bias = s->bal[ro] - s->bal[st];
    }
}

/* The stator body of motor i (its angular rate carries the rotor). */
static size_t motor_stator(const rigmat_mech *s, size_t i)
{
    if (s->mlin[i] != RIGMAT_NONE) {
        const rigmat_motor *mo = &s->m->motors[i];
        const rigmat_joint *jt = &s->m->joints[mo->joint];
        return mo->mounted_on_child ? jt->child : jt->parent;
    }
    return s->mstator[i];
}

/* ----------------------------------------------------------- assembly */

static void add_inertia(rigmat_mech *s, double mass, double inertia, const double complex *Jc,
        const double complex ac[2], const double complex *jth, double complex al)
{
    const size_t n = s->n;
    size_t r, c;

    for (r = 0; r < n; r++) {
        for (c = 0; c < n; c++)
            s->M[r * n + c] += mass * (Jc[r] * Jc[c] + Jc[n + r] * Jc[n + c]) +
                    inertia * jth[r] * jth[c];
        s->hb[r] += mass * (Jc[r] * ac[0] + Jc[n + r] * ac[1]) + inertia * jth[r] * al;
    }
}

/* The rotor's absolute rate row (stator rate + N * relative) into s->tj;
 * returns its velocity-product acceleration. */
static double complex rotor_row(rigmat_mech *s, size_t i, double ratio)
{
    const size_t st = motor_stator(s, i);
    double complex th, rate, bias;
    size_t col;

    motor_out(s, i, &th, s->jout + i * s->n, &rate, &bias);
    for (col = 0; col < s->n; col++)
        s->tj[col] = BJTH(s, st, col) + ratio * s->jout[i * s->n + col];
    return s->bal[st] + ratio * bias;
}

/* The motor's drive voltage from its input: a duty cycle scales the
 * supply (the drives that need one, src/model/kinds.c). */
static double complex motor_voltage(const rigmat_motor *mo, double complex u)
{
    return rigmat_drive_kind_desc(mo->drive)->needs_supply ? u * mo->supply_v : u;
}

/* ------------------------------------------- force forms: virtual work */

/* The generalized force of each force form at input value w, added to Q
 * (indexed by rigmat_force_kind like src/model/kinds.c). */
typedef void (*force_work)(rigmat_mech *s, const rigmat_force *fo, double complex w);

/* on a body at a point, along a direction in the world or the body frame */
static void point_force_work(rigmat_mech *s, const rigmat_force *fo, double complex w)
{
    const size_t n = s->n;
    double complex p[2], fx = w * fo->direction[0], fy = w * fo->direction[1];
    size_t r;
    point_kin(s, fo->body, fo->at_m, p, s->tJa, NULL, NULL);
    if (fo->frame_body) {
        const rigmat_mech_cs trig = rigmat_mech_cossin(s->bth[fo->body]);
        const double complex c = trig.c, sn = trig.s;
        rot(c, sn, w * fo->direction[0], w * fo->direction[1], &fx, &fy);
    }
    for (r = 0; r < n; r++)
        s->Q[r] += s->tJa[r] * fx + s->tJa[n + r] * fy;
}

/* a torque on a body, optionally reacting on another */
static void torque_work(rigmat_mech *s, const rigmat_force *fo, double complex w)
{
    size_t r;
    for (r = 0; r < s->n; r++) {
        double complex jr = BJTH(s, fo->body, r);
        if (fo->reacting != RIGMAT_NONE)
            jr -= BJTH(s, fo->reacting, r);
        s->Q[r] += w * jr;
    }
}

/* a generalized force along a joint's relative motion */
static void across_work(rigmat_mech *s, const rigmat_force *fo, double complex w)
{
    double complex val, rate, bias;
    size_t r;
    joint_rel(s, fo->joint, &val, s->tj, &rate, &bias);
    for (r = 0; r < s->n; r++)
        s->Q[r] += w * s->tj[r];
}

static const force_work force_works[RIGMAT_NFORCE_FORMS] = {
    [RIGMAT_FORCE_POINT] = point_force_work,
    [RIGMAT_FORCE_TORQUE] = torque_work,
    [RIGMAT_FORCE_ACROSS] = across_work,
};

rigmat_status rigmat_mech_link_line(const rigmat_link *lk, int spring,
        const double complex pa[2], const double complex pb[2], const double complex va[2],
        const double complex vb[2], double complex *ex, double complex *ey,
        double complex *length, double complex *rate, rigmat_error *err)
{
    const double complex dx = pb[0] - pa[0], dy = pb[1] - pa[1];
    const double complex d2 = dx * dx + dy * dy;
    double complex d;

    if (!(creal(d2) > 0.0)) {
        err != NULL ? (void)(err->where = lk->loc) : (void)0;
        return RIGMAT_FAIL(err, RIGMAT_ENUMERIC,
                "%s '%s' has zero length: its line of action is undefined",
                spring ? "spring" : "damper", lk->name);
    }
    d = csqrt(d2); /* Re d2 > 0: the principal branch is analytic here */
    *ex = dx / d;
    *ey = dy / d;
    *length = d;
    *rate = *ex * (vb[0] - va[0]) + *ey * (vb[1] - va[1]);
    return RIGMAT_OK;
}

/* Fill M, hb, Q and the motor currents from the state of the workspace
 * (q, qd, ueff and the current states in cur).  RIGMAT_ENUMERIC for a point
 * spring or damper of zero length. */
static rigmat_status assemble(rigmat_mech *s, rigmat_error *err)
{
    const rigmat_model *m = s->m;
    const size_t n = s->n;
    const double gx = -m->gravity_m_s2 * sin(m->slope_rad);
    const double gy = -m->gravity_m_s2 * cos(m->slope_rad);
    size_t b, i, r;

    for (r = 0; r < n * n; r++)
        s->M[r] = 0;
    for (r = 0; r < n; r++)
        s->hb[r] = s->Q[r] = 0;

    for (b = 1; b < s->nb; b++) {
        const rigmat_body *bd = &m->bodies[b];
        double complex pc[2], ac[2];
        if (bd->mass_kg == 0.0 && bd->inertia_kgm2 == 0.0)
            continue;
        point_kin(s, b, bd->com_m, pc, s->tJa, NULL, ac);
        add_inertia(s, bd->mass_kg, bd->inertia_kgm2, s->tJa, ac, &BJTH(s, b, 0), s->bal[b]);
        for (r = 0; r < n; r++)
            s->Q[r] += bd->mass_kg * (s->tJa[r] * gx + s->tJa[n + r] * gy);
    }

    /* motors: rotor and load inertia (kinetic energy exact), torque */
    for (i = 0; i < m->nmotors; i++) {
        const rigmat_motor *mo = &m->motors[i];
        const double N = mo->gear_ratio, cnt = (double)mo->count;
        double complex th, bias, al, volt, tau, w;
        double complex z2[2] = { 0, 0 };

        motor_out(s, i, &th, s->jout + i * n, &s->wout[i], &bias);
        s->bout[i] = bias;
        w = s->wout[i];
        if (mo->rotor_inertia_kgm2 > 0.0) {
            al = rotor_row(s, i, N);
            for (r = 0; r < 2 * n; r++)
                s->tJb[r] = 0;
            add_inertia(s, 0.0, cnt * mo->rotor_inertia_kgm2, s->tJb, z2, s->tj, al);
        }
        if (mo->load_inertia_kgm2 > 0.0) {
            al = rotor_row(s, i, 1.0);
            for (r = 0; r < 2 * n; r++)
                s->tJb[r] = 0;
            add_inertia(s, 0.0, mo->load_inertia_kgm2, s->tJb, z2, s->tj, al);
        }
        volt = motor_voltage(mo, s->ueff[s->umot[i]]);
        if (!rigmat_drive_kind_desc(mo->drive)->has_current_state)
            s->cur[i] = s->ueff[s->umot[i]]; /* the drive sets the current */
        else if (mo->inductance_neglected)
            s->cur[i] = (volt - mo->polarity * mo->back_emf_v_s_rad * N * w) /
                    mo->resistance_ohm;
        /* else cur[i] holds the state */
        tau = cnt * (mo->polarity * mo->efficiency * mo->torque_constant_nm_a * s->cur[i] -
                             mo->friction_nm_s_rad * N * w);
        for (r = 0; r < n; r++)
            s->Q[r] += N * tau * s->jout[i * n + r];
    }

    /* springs and dampers */
    for (i = 0; i < m->nsprings + m->ndampers; i++) {
        const int spring = i < m->nsprings;
        const rigmat_link *lk = spring ? &m->springs[i] : &m->dampers[i - m->nsprings];
        double complex val, rate, bias, gen;

        if (lk->attach == RIGMAT_ATTACH_ACROSS) {
            joint_rel(s, lk->joint, &val, s->tj, &rate, &bias);
        } else if (lk->attach == RIGMAT_ATTACH_BETWEEN) {
            for (r = 0; r < n; r++)
                s->tj[r] = BJTH(s, lk->body_b, r) - BJTH(s, lk->body_a, r);
            val = s->bth[lk->body_b] - s->bth[lk->body_a];
            rate = s->bom[lk->body_b] - s->bom[lk->body_a];
        } else {
            double complex pa[2], pb[2], va[2], vb[2], ex, ey;
            rigmat_status lst;
            point_kin(s, lk->body_a, lk->point_a_m, pa, s->tJa, va, NULL);
            point_kin(s, lk->body_b, lk->point_b_m, pb, s->tJb, vb, NULL);
            lst = rigmat_mech_link_line(lk, spring, pa, pb, va, vb, &ex, &ey, &val, &rate, err);
            if (lst != RIGMAT_OK)
                return lst;
            for (r = 0; r < n; r++)
                s->tj[r] = ex * (s->tJb[r] - s->tJa[r]) + ey * (s->tJb[n + r] - s->tJa[n + r]);
        }
        gen = spring ? -lk->stiffness * (val - lk->rest) : -lk->coefficient * rate;
        for (r = 0; r < n; r++)
            s->Q[r] += gen * s->tj[r];
    }

    /* forces, torques, generalized forces */
    for (i = 0; i < m->nforces; i++) {
        const rigmat_force *fo = &m->forces[i];
        force_works[fo->kind](s, fo, s->ueff[s->ufor[i]]);
    }
    return RIGMAT_OK;
}

static const char *coord_state_name(const rigmat_mech *s, size_t c)
{
    return s->m->joints[s->cjoint[c]].name;
}

/* Solve M_FF qdd_F = (Q - hb)_F - M_FD qdd_D by LU with partial pivoting
 * on the real parts (the imaginary parts are the complex step's tangent and
 * must not steer the pivot order). */
static rigmat_status solve(rigmat_mech *s, rigmat_error *err)
{
    const size_t n = s->n, nf = s->nf;
    double dmax = 0.0;
    size_t a, b, k;

    for (a = 0; a < nf; a++) {
        const size_t ca = s->freec[a];
        double complex r = s->Q[ca] - s->hb[ca];
        for (k = 0; k < n; k++)
            if (s->m->joints[s->cjoint[k]].driven != RIGMAT_DRIVEN_NONE)
                r -= s->M[ca * n + k] * s->qdd[k];
        s->rhs[a] = r;
        for (b = 0; b < nf; b++)
            s->LU[a * nf + b] = s->M[ca * n + s->freec[b]];
        if (creal(s->LU[a * nf + a]) > dmax)
            dmax = creal(s->LU[a * nf + a]);
        s->perm[a] = a;
    }
    for (a = 0; a < nf; a++)
        if (!isfinite(creal(s->LU[a * nf + a]))) {
            const size_t c = s->freec[a];
            (void)RIGMAT_FAIL(err, RIGMAT_ENUMERIC,
                    "the inertia seen by joint '%s' overflows (%g): a reflected inertia, a "
                    "rotor's inertia times its gear ratio squared, or a mass or inertia "
                    "beyond double range", coord_state_name(s, c), creal(s->LU[a * nf + a]));
            rigmat_error_hint(err, "check the gear ratios, radii, leads and rotor inertias "
                                   "of the motors on this joint");
            if (err != NULL)
                err->where = s->m->joints[s->cjoint[c]].loc;
            return RIGMAT_ENUMERIC;
        }
    for (a = 0; a < nf; a++)
        if (!(creal(s->LU[a * nf + a]) > RIGMAT_MECH_PIVOT_RTOL * dmax)) {
            const size_t c = s->freec[a];
            (void)RIGMAT_FAIL(err, RIGMAT_ENUMERIC,
                    "the mass matrix is singular: coordinate of joint '%s' has no inertia "
                    "(diagonal %.3g of the largest, condition estimate %.3g)",
                    coord_state_name(s, c), dmax > 0.0 ? creal(s->LU[a * nf + a]) / dmax : 0.0,
                    creal(s->LU[a * nf + a]) > 0.0 ? dmax / creal(s->LU[a * nf + a]) : HUGE_VAL);
            rigmat_error_hint(err, "give the bodies it moves a mass or an inertia, or drive "
                                   "the joint");
            if (err != NULL)
                err->where = s->m->joints[s->cjoint[c]].loc;
            return RIGMAT_ENUMERIC;
        }
    for (k = 0; k < nf; k++) {
        size_t piv = k;
        double best = fabs(creal(s->LU[s->perm[k] * nf + k]));
        for (a = k + 1; a < nf; a++) {
            const double v = fabs(creal(s->LU[s->perm[a] * nf + k]));
            if (v > best) {
                best = v;
                piv = a;
            }
        }
        if (!(best > RIGMAT_MECH_PIVOT_RTOL * dmax)) {
            const size_t c = s->freec[k];
            (void)RIGMAT_FAIL(err, RIGMAT_ENUMERIC,
                    "the mass matrix is singular: the motion of joint '%s' has no inertia of "
                    "its own (pivot %.3g of the largest diagonal, condition estimate %.3g)",
                    coord_state_name(s, c), dmax > 0.0 ? best / dmax : 0.0,
                    best > 0.0 ? dmax / best : HUGE_VAL);
            rigmat_error_hint(err, "give the bodies it moves a mass or an inertia, or drive "
                                   "the joint");
            if (err != NULL)
                err->where = s->m->joints[s->cjoint[c]].loc;
            return RIGMAT_ENUMERIC;
        }
        {
            const size_t t = s->perm[k];
            s->perm[k] = s->perm[piv];
            s->perm[piv] = t;
        }
        for (a = k + 1; a < nf; a++) {
            double complex *ra = s->LU + s->perm[a] * nf;
            const double complex *rk = s->LU + s->perm[k] * nf;
            const double complex l = ra[k] / rk[k];
            ra[k] = l;
            for (b = k + 1; b < nf; b++)
                ra[b] -= l * rk[b];
            s->rhs[s->perm[a]] -= l * s->rhs[s->perm[k]];
        }
    }
    for (a = nf; a-- > 0;) {
        const double complex *ra = s->LU + s->perm[a] * nf;
        double complex v = s->rhs[s->perm[a]];
        for (b = a + 1; b < nf; b++)
            v -= ra[b] * s->qdd[s->freec[b]];
        s->qdd[s->freec[a]] = v / ra[a];
    }
    return RIGMAT_OK;
}

/* ------------------------------------------------------------- f and h */

static void unpack(rigmat_mech *s, const double complex *x, const double complex *u)
{
    const rigmat_layout *L = &s->canon;
    size_t c, i;

    for (i = 0; i < L->nu; i++)
        s->ueff[i] = s->xsh[i] != RIGMAT_NONE ? x[s->xsh[i]] : u[i];
    for (c = 0; c < s->n; c++) {
        const rigmat_driven dr = s->m->joints[s->cjoint[c]].driven;
        s->q[c] = s->xq[c] != RIGMAT_NONE ? x[s->xq[c]] : 0;
        s->qd[c] = s->xr[c] != RIGMAT_NONE ? x[s->xr[c]] : 0;
        s->qdd[c] = 0;
        if (dr == RIGMAT_DRIVEN_POSITION)
            s->q[c] = s->ueff[s->uq[c]];
        else if (dr == RIGMAT_DRIVEN_VELOCITY)
            s->qd[c] = s->ueff[s->uq[c]];
        else if (dr == RIGMAT_DRIVEN_ACCELERATION)
            s->qdd[c] = s->ueff[s->uq[c]];
    }
    for (i = 0; i < s->m->nmotors; i++)
        s->cur[i] = s->xi[i] != RIGMAT_NONE ? x[s->xi[i]] : 0;
}

/* ------------------------------------------- sensor kinds: readings */

/* What each sensor kind measures, before gain and offset, from the state
 * the evaluation has built (kinematics, and M, hb, Q and qdd after the
 * solve).  Indexed by rigmat_sensor_kind like src/model/kinds.c. */
typedef double complex (*sensor_reading)(rigmat_mech *s, const rigmat_sensor *se);

static double complex read_joint_position(rigmat_mech *s, const rigmat_sensor *se)
{
    const size_t c = s->coord[se->joint];
    return c != RIGMAT_NONE ? s->q[c] : 0;
}

static double complex read_joint_velocity(rigmat_mech *s, const rigmat_sensor *se)
{
    const size_t c = s->coord[se->joint];
    return c != RIGMAT_NONE ? s->qd[c] : 0;
}

static double complex read_angle(rigmat_mech *s, const rigmat_sensor *se)
{
    return s->bth[se->body];
}

static double complex read_rate(rigmat_mech *s, const rigmat_sensor *se)
{
    return s->bom[se->body];
}

/* relative readings are body_b minus body */
static double complex read_relative_angle(rigmat_mech *s, const rigmat_sensor *se)
{
    return s->bth[se->body_b] - s->bth[se->body];
}

static double complex read_relative_rate(rigmat_mech *s, const rigmat_sensor *se)
{
    return s->bom[se->body_b] - s->bom[se->body];
}

static double complex read_motor_angle(rigmat_mech *s, const rigmat_sensor *se)
{
    const rigmat_motor *mo = &s->m->motors[se->motor];
    double complex th, rate, bias, v;
    motor_out(s, se->motor, &th, s->tj, &rate, &bias);
    v = s->msign[se->motor] * mo->gear_ratio * (th - s->mtheta0[se->motor]);
    return v;
}

static double complex read_point_position(rigmat_mech *s, const rigmat_sensor *se)
{
    double complex p[2];
    point_kin(s, se->body, se->at_m, p, NULL, NULL, NULL);
    return se->axis[0] * p[0] + se->axis[1] * p[1];
}

static double complex read_point_velocity(rigmat_mech *s, const rigmat_sensor *se)
{
    double complex p[2], vel[2];
    point_kin(s, se->body, se->at_m, p, NULL, vel, NULL);
    return se->axis[0] * vel[0] + se->axis[1] * vel[1];
}

static double complex read_specific_force(rigmat_mech *s, const rigmat_sensor *se)
{
    const rigmat_model *m = s->m;
    const size_t n = s->n;
    const double gx = -m->gravity_m_s2 * sin(m->slope_rad);
    const double gy = -m->gravity_m_s2 * cos(m->slope_rad);
    const rigmat_mech_cs trig = rigmat_mech_cossin(s->bth[se->body]);
    const double complex c = trig.c, sn = trig.s;
    double complex ax, ay, bx, by, p[2], a[2];
    size_t r;
    if (s->rec != NULL)
        rigmat_rec_point_accel(s->rec, se->body, se->at_m, a);
    else /* the bias acceleration; the Jacobian times qdd is added below */
        point_kin(s, se->body, se->at_m, p, s->tJa, NULL, a);
    ax = a[0] - gx;
    ay = a[1] - gy;
    if (s->rec == NULL)
        for (r = 0; r < n; r++) {
            ax += s->tJa[r] * s->qdd[r];
            ay += s->tJa[n + r] * s->qdd[r];
        }
    /* R(th)^T: world into the body frame */
    bx = c * ax + sn * ay;
    by = -sn * ax + c * ay;
    return se->axis[0] * bx + se->axis[1] * by;
}

static double complex read_current(rigmat_mech *s, const rigmat_sensor *se)
{
    return s->cur[se->motor];
}

/* the generalized force the drive supplies: M qdd + hb - Q along the joint */
static double complex read_drive_force(rigmat_mech *s, const rigmat_sensor *se)
{
    const size_t c = s->coord[se->joint], n = s->n;
    double complex v;
    size_t r;
    if (c == RIGMAT_NONE)
        return 0;
    v = s->hb[c] - s->Q[c];
    for (r = 0; r < n; r++)
        v += s->M[c * n + r] * s->qdd[r];
    return v;
}

static const sensor_reading sensor_readings[RIGMAT_NSENSOR_KINDS] = {
    [RIGMAT_SENSE_JOINT_POSITION] = read_joint_position,
    [RIGMAT_SENSE_JOINT_VELOCITY] = read_joint_velocity,
    [RIGMAT_SENSE_ANGLE] = read_angle,
    [RIGMAT_SENSE_RATE] = read_rate,
    [RIGMAT_SENSE_RELATIVE_ANGLE] = read_relative_angle,
    [RIGMAT_SENSE_RELATIVE_RATE] = read_relative_rate,
    [RIGMAT_SENSE_MOTOR_ANGLE] = read_motor_angle,
    [RIGMAT_SENSE_POINT_POSITION] = read_point_position,
    [RIGMAT_SENSE_POINT_VELOCITY] = read_point_velocity,
    [RIGMAT_SENSE_SPECIFIC_FORCE] = read_specific_force,
    [RIGMAT_SENSE_CURRENT] = read_current,
    [RIGMAT_SENSE_DRIVE_FORCE] = read_drive_force,
};

/* rigmat_mech_alloc has checked that every sensor's kind has a reading */
static double complex sensor_value(rigmat_mech *s, const double complex *x, size_t k)
{
    const rigmat_sensor *se = &s->m->sensors[k];
    /* a filtered sensor reads its filter's state */
    double complex v = s->xfilt[k] != RIGMAT_NONE ? x[s->xfilt[k]] :
                                                    sensor_readings[se->kind](s, se);
    /* a bias is in the measured quantity's unit, before gain and counts */
    if (s->xbias[k] != RIGMAT_NONE)
        v += x[s->xbias[k]];
    /* an encoder read in counts: counts per radian */
    if (se->unit_counts)
        v *= se->counts_per_rev / (2.0 * M_PI);
    return se->gain * v + se->offset;
}

rigmat_status rigmat_mech_eval(rigmat_mech *s, const double complex *x, const double complex *u,
        double complex *f, double complex *y, rigmat_error *err)
{
    const rigmat_layout *L = &s->canon;
    const rigmat_model *m = s->m;
    rigmat_status st;
    size_t k;

    unpack(s, x, u);
    if (s->rec != NULL) {
        st = rigmat_rec_eval(s->rec, err);
    } else {
        if (s->cl != NULL) {
            /* closed loops: the dependent coordinates and rates by assembly */
            st = rigmat_closure_positions(s->cl, s, err);
            if (st != RIGMAT_OK)
                return st;
        } else {
            kinematics(s);
        }
        st = assemble(s, err);
        if (st != RIGMAT_OK)
            return st;
        st = s->cl != NULL ? rigmat_closure_accelerations(s->cl, s, err) : solve(s, err);
    }
    if (st != RIGMAT_OK)
        return st;
    if (f != NULL)
        for (k = 0; k < L->nx; k++) {
            const rigmat_signal *sg = &L->states[k];
            switch (sg->kind) {
            case RIGMAT_SIG_COORD: f[k] = s->qd[s->coord[sg->index]]; break;
            case RIGMAT_SIG_RATE: f[k] = s->qdd[s->coord[sg->index]]; break;
            case RIGMAT_SIG_CURRENT: {
                const rigmat_motor *mo = &m->motors[sg->index];
                const double complex volt = motor_voltage(mo, s->ueff[s->umot[sg->index]]);
                f[k] = (volt - mo->resistance_ohm * s->cur[sg->index] -
                               mo->polarity * mo->back_emf_v_s_rad * mo->gear_ratio *
                                       s->wout[sg->index]) /
                        mo->inductance_h;
                break;
            }
            case RIGMAT_SIG_SHAPING: {
                const rigmat_signal *in = &L->inputs[sg->index];
                const double fc = in->kind == RIGMAT_SIG_FORCE ?
                        m->forces[in->index].bandwidth_hz :
                        m->joints[in->index].bandwidth_hz;
                f[k] = 2.0 * M_PI * fc * (u[sg->index] - x[k]);
                break;
            }
            case RIGMAT_SIG_FILTERED: {
                /* z' = 2 pi F (reading + w - z): first-order low-pass,
                 * the sensor's density w entering before it */
                const rigmat_sensor *se = &m->sensors[sg->index];
                double complex in = sensor_readings[se->kind](s, se);
                if (s->ufilt[sg->index] != RIGMAT_NONE)
                    in += u[s->ufilt[sg->index]];
                f[k] = 2.0 * M_PI * se->filter_hz * (in - x[k]);
                break;
            }
            case RIGMAT_SIG_BIAS: {
                /* b' = -b/tau + w (Gauss-Markov) or b' = w (random walk) */
                const rigmat_sensor *se = &m->sensors[sg->index];
                f[k] = u[s->ubias[sg->index]];
                if (se->bias_tau_s > 0.0)
                    f[k] -= x[k] / se->bias_tau_s;
                break;
            }
            default: f[k] = 0; break;
            }
        }
    if (y != NULL)
        for (k = 0; k < L->ny; k++)
            y[k] = sensor_value(s, x, L->outputs[k].index);
    return RIGMAT_OK;
}

rigmat_status rigmat_mech_eval_real(rigmat_mech *s, const double *x, const double *u, double *f,
        double *y, rigmat_error *err)
{
    const rigmat_layout *L = &s->canon;
    rigmat_status st;
    size_t k;

    for (k = 0; k < L->nx; k++)
        s->xc[k] = x[k];
    for (k = 0; k < L->nu; k++)
        s->uc[k] = u[k];
    st = rigmat_mech_eval(s, s->xc, s->uc, s->fc, s->yc, err);
    if (st != RIGMAT_OK)
        return st;
    if (f != NULL)
        for (k = 0; k < L->nx; k++)
            f[k] = creal(s->fc[k]);
    if (y != NULL)
        for (k = 0; k < L->ny; k++)
            y[k] = creal(s->yc[k]);
    return RIGMAT_OK;
}

rigmat_status rigmat_mech_motor_currents(rigmat_mech *s, const double *x, const double *u,
        double *cur, rigmat_error *err)
{
    const rigmat_status st = rigmat_mech_eval_real(s, x, u, s->fr, NULL, err);
    size_t k;

    if (st != RIGMAT_OK)
        return st;
    for (k = 0; k < s->m->nmotors; k++)
        cur[k] = creal(s->cur[k]);
    return RIGMAT_OK;
}

rigmat_status rigmat_mech_jacobians(rigmat_mech *s, const double *x, const double *u, double *A,
        double *B, double *C, double *D, double *f0, double *y0, rigmat_error *err)
{
    const size_t nx = s->canon.nx, nu = s->canon.nu, ny = s->canon.ny;
    rigmat_status st;
    size_t j, k;

    for (k = 0; k < nx; k++)
        s->xc[k] = x[k];
    for (k = 0; k < nu; k++)
        s->uc[k] = u[k];
    st = rigmat_mech_eval(s, s->xc, s->uc, s->fc, s->yc, err);
    if (st != RIGMAT_OK)
        return st;
    if (f0 != NULL)
        for (k = 0; k < nx; k++)
            f0[k] = creal(s->fc[k]);
    if (y0 != NULL)
        for (k = 0; k < ny; k++)
            y0[k] = creal(s->yc[k]);
    for (j = 0; j < nx + nu; j++) {
        double complex *z = j < nx ? &s->xc[j] : &s->uc[j - nx];
        *z += step_h * (double complex)I;
        st = rigmat_mech_eval(s, s->xc, s->uc, s->fc, s->yc, err);
        *z = creal(*z);
        if (st != RIGMAT_OK)
            return st;
        for (k = 0; k < nx; k++) {
            double *dst = j < nx ? (A ? &A[k * nx + j] : NULL) : (B ? &B[k * nu + j - nx] : NULL);
            if (dst != NULL)
                *dst = cimag(s->fc[k]) / step_h;
        }
        for (k = 0; k < ny; k++) {
            double *dst = j < nx ? (C ? &C[k * nx + j] : NULL) : (D ? &D[k * nu + j - nx] : NULL);
            if (dst != NULL)
                *dst = cimag(s->yc[k]) / step_h;
        }
    }
    return RIGMAT_OK;
}

/* After rigmat_mech_eval: f with each free coordinate's rate row replaced
 * by its held residual (M qdd)_c / M_cc (see mechanics.h).  Analytic in the
 * inputs, so the complex step differentiates it. */
static void held_rows(rigmat_mech *s, double complex *f)
{
    const rigmat_layout *L = &s->canon;
    const size_t n = s->n;
    size_t k, a, b;

    for (k = 0; k < L->nx; k++) {
        size_t c;
        if (L->states[k].kind != RIGMAT_SIG_RATE)
            continue;
        c = s->coord[L->states[k].index];
        for (a = 0; a < s->nf && s->freec[a] != c; a++)
            ;
        if (a == s->nf)
            continue; /* a driven coordinate: its row stays f */
        {
            double complex v = 0;
            for (b = 0; b < n; b++)
                v += s->M[c * n + b] * s->qdd[b];
            f[k] = v / s->M[c * n + c];
        }
    }
}

rigmat_status rigmat_mech_held(rigmat_mech *s, const double *x, const double *u, double *g,
        double *Gx, double *Gu, rigmat_error *err)
{
    const size_t nx = s->canon.nx, nu = s->canon.nu;
    rigmat_status st;
    size_t j, k;

    for (k = 0; k < nx; k++)
        s->xc[k] = x[k];
    for (k = 0; k < nu; k++)
        s->uc[k] = u[k];
    st = rigmat_mech_eval(s, s->xc, s->uc, s->fc, NULL, err);
    if (st != RIGMAT_OK)
        return st;
    held_rows(s, s->fc);
    if (g != NULL)
        for (k = 0; k < nx; k++)
            g[k] = creal(s->fc[k]);
    if (Gx == NULL && Gu == NULL)
        return RIGMAT_OK;
    for (j = 0; j < nx + nu; j++) {
        double complex *z = j < nx ? &s->xc[j] : &s->uc[j - nx];
        double *col = j < nx ? Gx : Gu;
        if (col == NULL)
            continue;
        *z += step_h * (double complex)I;
        st = rigmat_mech_eval(s, s->xc, s->uc, s->fc, NULL, err);
        *z = creal(*z);
        if (st != RIGMAT_OK)
            return st;
        held_rows(s, s->fc);
        for (k = 0; k < nx; k++) {
            if (j < nx)
                Gx[k * nx + j] = cimag(s->fc[k]) / step_h;
            else
                Gu[k * nu + j - nx] = cimag(s->fc[k]) / step_h;
        }
    }
    return RIGMAT_OK;
}

void rigmat_mech_map_get(const rigmat_mech *s, rigmat_mech_map *out)
{
    out->n = s->n;
    out->nb = s->nb;
    out->nf = s->nf;
    out->coord = s->coord;
    out->cjoint = s->cjoint;
    out->order = s->order;
    out->bjoint = s->bjoint;
    out->xq = s->xq;
    out->xr = s->xr;
    out->uq = s->uq;
    out->freec = s->freec;
    out->xi = s->xi;
    out->umot = s->umot;
    out->ufor = s->ufor;
    out->xsh = s->xsh;
    out->xbias = s->xbias;
    out->ubias = s->ubias;
    out->xfilt = s->xfilt;
    out->ufilt = s->ufilt;
    out->mstator = s->mstator;
    out->mrotor = s->mrotor;
    out->mlin = s->mlin;
    out->mk = s->mk;
    out->msign = s->msign;
    out->mtheta0 = s->mtheta0;
}

int rigmat_mech_is_balance_row(const rigmat_mech *s, size_t k)
{
    const rigmat_signal_kind kd = s->canon.states[k].kind;
    return kd == RIGMAT_SIG_RATE || kd == RIGMAT_SIG_CURRENT || kd == RIGMAT_SIG_SHAPING ||
            kd == RIGMAT_SIG_FILTERED;
}

/* ------------------------------------------------------- construction */

static const char *driven_word(rigmat_driven d)
{
    return d == RIGMAT_DRIVEN_POSITION ? "position" :
           d == RIGMAT_DRIVEN_VELOCITY ? "velocity" : "acceleration";
}

/* Fill err for an element that needs a higher derivative of a driven joint. */
static rigmat_status need(rigmat_mech *s, rigmat_error *err, const char *what, const char *name,
        rigmat_loc loc, size_t c, int accel)
{
    const rigmat_joint *jt = &s->m->joints[s->cjoint[c]];

    (void)RIGMAT_FAIL(err, RIGMAT_EMODEL, "%s '%s' needs the %s of %s-driven joint '%s'", what,
            name, accel ? "acceleration" : "rate", driven_word(jt->driven), jt->name);
    rigmat_error_hint(err, "use driven: %s", accel ? "acceleration" : "velocity");
    if (err != NULL) {
        err->where = loc;
        err->within = jt->loc;
    }
    return RIGMAT_EMODEL;
}

static int nonzero(double v, double scale)
{
    return fabs(v) > 1e-12 * (scale > 1.0 ? scale : 1.0);
}

static double row_scale(const double complex *r, size_t n)
{
    double mx = 0.0;
    size_t i;
    for (i = 0; i < n; i++)
        if (fabs(creal(r[i])) > mx)
            mx = fabs(creal(r[i]));
    return mx;
}

/* The Jacobian row of a damper's displacement into s->tj; 0 when a point
 * damper has zero length at this configuration. */
static int link_row(rigmat_mech *s, const rigmat_link *lk)
{
    const size_t n = s->n;
    size_t r;

    if (lk->attach == RIGMAT_ATTACH_ACROSS) {
        double complex v, rt, b;
        joint_rel(s, lk->joint, &v, s->tj, &rt, &b);
    } else if (lk->attach == RIGMAT_ATTACH_BETWEEN) {
        for (r = 0; r < n; r++)
            s->tj[r] = BJTH(s, lk->body_b, r) - BJTH(s, lk->body_a, r);
    } else {
        double complex pa[2], pb[2], dx, dy, d;
        point_kin(s, lk->body_a, lk->point_a_m, pa, s->tJa, NULL, NULL);
        point_kin(s, lk->body_b, lk->point_b_m, pb, s->tJb, NULL, NULL);
        dx = pb[0] - pa[0];
        dy = pb[1] - pa[1];
        if (!(creal(dx * dx + dy * dy) > 0.0))
            return 0;
        d = csqrt(dx * dx + dy * dy);
        for (r = 0; r < n; r++)
            s->tj[r] = (dx * (s->tJb[r] - s->tJa[r]) + dy * (s->tJb[n + r] - s->tJa[n + r])) / d;
    }
    return 1;
}

/* The coupling of coordinates a and b in the mass matrix from one inertia:
 * mass * Jc_a . Jc_b + inertia * j_a j_b (real parts). */
static double coupling(const rigmat_mech *s, double mass, double inertia,
        const double complex *Jc, const double complex *jth, size_t a, size_t b)
{
    const size_t n = s->n;
    double v = inertia * creal(jth[a]) * creal(jth[b]);
    if (Jc != NULL)
        v += mass * (creal(Jc[a]) * creal(Jc[b]) + creal(Jc[n + a]) * creal(Jc[n + b]));
    return v;
}

/* Check, at a generic configuration (structural zeros are exact there),
 * that every derivative of a driven coordinate the equations use is given:
 * rates of position-driven coordinates (dampers, back-emf and friction of
 * motors, velocity sensors) and accelerations of position- and
 * velocity-driven ones (an inertia coupled to a free coordinate, an
 * accelerometer, a drive-force sensor). */
/* ------------------------------------ sensor kinds: what they read */

/* Whether a sensor reads the rate (or the acceleration) of coordinate c,
 * which a position-driven (velocity-driven) joint does not supply; at the
 * generic point check_needs sets up.  NULL: never.  Indexed by
 * rigmat_sensor_kind. */
struct sensor_needs {
    int (*rate)(rigmat_mech *s, const rigmat_sensor *se, size_t c);
    int (*acceleration)(rigmat_mech *s, const rigmat_sensor *se, size_t c);
};

static int joint_velocity_needs_rate(rigmat_mech *s, const rigmat_sensor *se, size_t c)
{
    return s->coord[se->joint] == c;
}

static int rate_needs_rate(rigmat_mech *s, const rigmat_sensor *se, size_t c)
{
    return nonzero(creal(BJTH(s, se->body, c)), 1.0);
}

static int relative_rate_needs_rate(rigmat_mech *s, const rigmat_sensor *se, size_t c)
{
    return nonzero(creal(BJTH(s, se->body_b, c) - BJTH(s, se->body, c)), 1.0);
}

static int point_velocity_needs_rate(rigmat_mech *s, const rigmat_sensor *se, size_t c)
{
    double complex p[2];
    point_kin(s, se->body, se->at_m, p, s->tJa, NULL, NULL);
    return nonzero(se->axis[0] * creal(s->tJa[c]) + se->axis[1] * creal(s->tJa[s->n + c]), 1.0);
}

static int specific_force_needs_acceleration(rigmat_mech *s, const rigmat_sensor *se, size_t c)
{
    double complex p[2];
    point_kin(s, se->body, se->at_m, p, s->tJa, NULL, NULL);
    return nonzero(creal(s->tJa[c]), 1.0) || nonzero(creal(s->tJa[s->n + c]), 1.0);
}

/* the drive force holds every body whose inertia couples its coordinate to c */
static int drive_force_needs_acceleration(rigmat_mech *s, const rigmat_sensor *se, size_t c)
{
    const rigmat_model *m = s->m;
    const size_t k = s->coord[se->joint];
    size_t b;
    int bad = 0;

    if (k == RIGMAT_NONE)
        return 0;
    for (b = 1; b < s->nb && !bad; b++) {
        const rigmat_body *bd = &m->bodies[b];
        double complex pc[2];
        point_kin(s, b, bd->com_m, pc, s->tJa, NULL, NULL);
        bad = nonzero(coupling(s, bd->mass_kg, bd->inertia_kgm2, s->tJa, &BJTH(s, b, 0), k, c),
                bd->mass_kg + bd->inertia_kgm2);
    }
    return bad;
}

static const struct sensor_needs sensor_needs[RIGMAT_NSENSOR_KINDS] = {
    [RIGMAT_SENSE_JOINT_POSITION] = { NULL, NULL },
    [RIGMAT_SENSE_JOINT_VELOCITY] = { joint_velocity_needs_rate, NULL },
    [RIGMAT_SENSE_ANGLE] = { NULL, NULL },
    [RIGMAT_SENSE_RATE] = { rate_needs_rate, NULL },
    [RIGMAT_SENSE_RELATIVE_ANGLE] = { NULL, NULL },
    [RIGMAT_SENSE_RELATIVE_RATE] = { relative_rate_needs_rate, NULL },
    [RIGMAT_SENSE_MOTOR_ANGLE] = { NULL, NULL },
    [RIGMAT_SENSE_POINT_POSITION] = { NULL, NULL },
    [RIGMAT_SENSE_POINT_VELOCITY] = { point_velocity_needs_rate, NULL },
    [RIGMAT_SENSE_SPECIFIC_FORCE] = { NULL, specific_force_needs_acceleration },
    [RIGMAT_SENSE_CURRENT] = { NULL, NULL },
    [RIGMAT_SENSE_DRIVE_FORCE] = { NULL, drive_force_needs_acceleration },
};

static rigmat_status check_needs(rigmat_mech *s, rigmat_error *err)
{
    const rigmat_model *m = s->m;
    const size_t n = s->n;
    size_t c, i, f, b;

    for (c = 0; c < n; c++) {
        s->q[c] = 0.31 + 0.173 * (double)c;
        s->qd[c] = s->qdd[c] = 0;
    }
    kinematics(s);
    for (c = 0; c < n; c++) {
        const rigmat_driven dr = m->joints[s->cjoint[c]].driven;
        if (dr != RIGMAT_DRIVEN_POSITION)
            continue;
        for (i = 0; i < m->ndampers; i++)
            if (link_row(s, &m->dampers[i]) &&
                    nonzero(creal(s->tj[c]), row_scale(s->tj, n)))
                return need(s, err, "damper", m->dampers[i].name, m->dampers[i].loc, c, 0);
        for (i = 0; i < m->nmotors; i++) {
            const rigmat_motor *mo = &m->motors[i];
            double complex th, rt, bi;
            /* a drive that sets the current has no back-EMF to need the rate */
            if (!rigmat_drive_kind_desc(mo->drive)->has_current_state &&
                    mo->friction_nm_s_rad == 0.0)
                continue;
            motor_out(s, i, &th, s->tj, &rt, &bi);
            if (nonzero(creal(s->tj[c]), row_scale(s->tj, n)))
                return need(s, err, "motor", mo->name, mo->loc, c, 0);
        }
        for (i = 0; i < m->nsensors; i++) {
            const rigmat_sensor *se = &m->sensors[i];
            const struct sensor_needs *sn = &sensor_needs[se->kind];
            if (sn->rate != NULL && sn->rate(s, se, c))
                return need(s, err, "sensor", se->name, se->loc, c, 0);
        }
    }
    for (c = 0; c < n; c++) {
        const rigmat_driven dr = m->joints[s->cjoint[c]].driven;
        if (dr != RIGMAT_DRIVEN_POSITION && dr != RIGMAT_DRIVEN_VELOCITY)
            continue;
        for (b = 1; b < s->nb; b++) {
            const rigmat_body *bd = &m->bodies[b];
            double complex pc[2];
            if (bd->mass_kg == 0.0 && bd->inertia_kgm2 == 0.0)
                continue;
            point_kin(s, b, bd->com_m, pc, s->tJa, NULL, NULL);
            for (f = 0; f < s->nf; f++)
                if (nonzero(coupling(s, bd->mass_kg, bd->inertia_kgm2, s->tJa, &BJTH(s, b, 0),
                                    s->freec[f], c),
                            bd->mass_kg + bd->inertia_kgm2))
                    return need(s, err, "body", bd->name, bd->loc, c, 1);
        }
        for (i = 0; i < m->nmotors; i++) {
            const rigmat_motor *mo = &m->motors[i];
            const double in[2] = { mo->rotor_inertia_kgm2 * mo->count, mo->load_inertia_kgm2 };
            const double ratio[2] = { mo->gear_ratio, 1.0 };
            size_t w;
            for (w = 0; w < 2; w++) {
                if (in[w] == 0.0)
                    continue;
                (void)rotor_row(s, i, ratio[w]);
                for (f = 0; f < s->nf; f++)
                    if (nonzero(coupling(s, 0.0, in[w], NULL, s->tj, s->freec[f], c), in[w]))
                        return need(s, err, "motor", mo->name, mo->loc, c, 1);
            }
        }
        for (i = 0; i < m->nsensors; i++) {
            const rigmat_sensor *se = &m->sensors[i];
            const struct sensor_needs *sn = &sensor_needs[se->kind];
            if (sn->acceleration != NULL && sn->acceleration(s, se, c))
                return need(s, err, "sensor", se->name, se->loc, c, 1);
        }
    }
    return RIGMAT_OK;
}

/* Parents before children; RIGMAT_EMODEL for a body without a joint or a
 * loop (the loader reports these with places; this is the library's own
 * guard for hand-built models). */
static rigmat_status tree_order(rigmat_mech *s, rigmat_error *err)
{
    const rigmat_model *m = s->m;
    size_t b, j, k = 0, depth;
    size_t *dep = calloc(s->nb, sizeof *dep);

    if (dep == NULL)
        return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
    for (j = 0; j < m->njoints; j++) {
        const size_t ch = m->joints[j].child;
        if (ch == 0 || ch >= s->nb || m->joints[j].parent >= s->nb ||
                s->bjoint[ch] != RIGMAT_NONE) {
            free(dep);
            return RIGMAT_FAIL(err, RIGMAT_EMODEL, "joint '%s' does not make a tree",
                    m->joints[j].name);
        }
        s->bjoint[ch] = j;
    }
    for (b = 1; b < s->nb; b++) {
        size_t at = b, steps = 0;
        while (at != 0 && steps <= s->nb) {
            if (s->bjoint[at] == RIGMAT_NONE) {
                free(dep);
                return RIGMAT_FAIL(err, RIGMAT_EMODEL, "body '%s' is not attached by a joint",
                        m->bodies[at].name);
            }
            at = m->joints[s->bjoint[at]].parent;
            steps++;
        }
        if (steps > s->nb) {
            free(dep);
            return RIGMAT_FAIL(err, RIGMAT_EMODEL, "the joints above body '%s' form a loop",
                    m->bodies[b].name);
        }
        dep[b] = steps;
    }
    for (depth = 1; depth < s->nb; depth++)
        for (b = 1; b < s->nb; b++)
            if (dep[b] == depth)
                s->order[k++] = b;
    free(dep);
    return RIGMAT_OK;
}

static rigmat_status mech_alloc(const rigmat_model *m, int tree, rigmat_mech **out,
        rigmat_error *err);

rigmat_status rigmat_mech_alloc(const rigmat_model *m, rigmat_mech **out, rigmat_error *err)
{
    return mech_alloc(m, 0, out, err);
}

rigmat_status rigmat_mech_alloc_tree(const rigmat_model *m, rigmat_mech **out,
        rigmat_error *err)
{
    return mech_alloc(m, 1, out, err);
}

static rigmat_status mech_alloc(const rigmat_model *m, int tree, rigmat_mech **out,
        rigmat_error *err)
{
    rigmat_mech *s;
    rigmat_status st = RIGMAT_OK;
    const rigmat_layout *L;
    int bad = 0;
    size_t j, k, n = 0, nm, nb;

    *out = NULL;
    if (m->closures_pending && !tree)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "the closed loops of the model are not "
                "assembled yet: call rigmat_model_check_equations after loading");
    s = calloc(1, sizeof *s);
    if (s == NULL)
        return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
    s->m = m;
    st = rigmat_layout_canonical(m, &s->canon, err);
    if (st != RIGMAT_OK)
        goto fail;
    L = &s->canon;
    if (RIGMAT_NEVER(m->nbodies == 0 || m->bodies[0].joint != RIGMAT_NONE)) {
        st = RIGMAT_FAIL(err, RIGMAT_EINTERNAL, "body 0 must be the ground");
        goto fail;
    }
    /* every kind in the model has its behaviour in the tables above (a kind
     * added to src/model/kinds.c without it is a bug, not a model error) */
    for (j = 0; j < m->njoints; j++)
        if ((size_t)m->joints[j].type >= RIGMAT_NJOINT_TYPES) {
            st = RIGMAT_FAIL(err, RIGMAT_EINTERNAL, "joint '%s' has no type", m->joints[j].name);
            goto fail;
        }
    for (j = 0; j < m->nsensors; j++)
        if ((size_t)m->sensors[j].kind >= RIGMAT_NSENSOR_KINDS ||
                sensor_readings[m->sensors[j].kind] == NULL) {
            st = RIGMAT_FAIL(err, RIGMAT_EINTERNAL, "sensor '%s' has a kind without a reading",
                    m->sensors[j].name);
            goto fail;
        }
    for (j = 0; j < m->nforces; j++)
        if ((size_t)m->forces[j].kind >= RIGMAT_NFORCE_FORMS) {
            st = RIGMAT_FAIL(err, RIGMAT_EINTERNAL, "force '%s' has no form", m->forces[j].name);
            goto fail;
        }
    for (j = 0; j < m->nmotors; j++)
        if ((size_t)m->motors[j].drive >= RIGMAT_NMOTOR_DRIVES) {
            st = RIGMAT_FAIL(err, RIGMAT_EINTERNAL, "motor '%s' has no drive", m->motors[j].name);
            goto fail;
        }
    nb = s->nb = m->nbodies;
    nm = m->nmotors;
    s->coord = idx_alloc(m->njoints, &bad);
    for (j = 0; j < m->njoints && !bad; j++)
        if (rigmat_joint_kind(m->joints[j].type)->has_coordinate)
            s->coord[j] = n++;
    s->n = n;
    s->cjoint = idx_alloc(n, &bad);
    s->xq = idx_alloc(n, &bad);
    s->xr = idx_alloc(n, &bad);
    s->uq = idx_alloc(n, &bad);
    s->freec = idx_alloc(n, &bad);
    s->order = idx_alloc(nb, &bad);
    s->bjoint = idx_alloc(nb, &bad);
    s->xi = idx_alloc(nm, &bad);
    s->umot = idx_alloc(nm, &bad);
    s->ufor = idx_alloc(m->nforces, &bad);
    s->xsh = idx_alloc(L->nu, &bad);
    s->xbias = idx_alloc(m->nsensors, &bad);
    s->ubias = idx_alloc(m->nsensors, &bad);
    s->xfilt = idx_alloc(m->nsensors, &bad);
    s->ufilt = idx_alloc(m->nsensors, &bad);
    s->mstator = idx_alloc(nm, &bad);
    s->mrotor = idx_alloc(nm, &bad);
    s->mlin = idx_alloc(nm, &bad);
    s->mk = zalloc(nm, sizeof(double), &bad);
    s->msign = zalloc(nm, sizeof(double), &bad);
    s->mtheta0 = zalloc(nm, sizeof(double), &bad);
#define CZ(field, count) s->field = zalloc((count), sizeof(double complex), &bad)
    CZ(bp, 2 * nb); CZ(bth, nb); CZ(bJ, 2 * nb * n); CZ(bjth, nb * n); CZ(bv, 2 * nb);
    CZ(bom, nb); CZ(ba, 2 * nb); CZ(bal, nb);
    CZ(q, n); CZ(qd, n); CZ(qdd, n); CZ(M, n * n); CZ(hb, n); CZ(Q, n); CZ(ueff, L->nu);
    CZ(LU, n * n); CZ(rhs, n); CZ(tJa, 2 * n); CZ(tJb, 2 * n); CZ(tj, n); CZ(jout, nm * n);
    CZ(cur, nm); CZ(wout, nm); CZ(bout, nm);
    CZ(xc, L->nx); CZ(uc, L->nu); CZ(fc, L->nx); CZ(yc, L->ny);
#undef CZ
    s->perm = zalloc(n, sizeof(size_t), &bad);
    s->fr = zalloc(L->nx, sizeof(double), &bad);
    if (bad) {
        st = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
        goto fail;
    }
    for (j = 0; j < m->njoints; j++)
        if (s->coord[j] != RIGMAT_NONE) {
            s->cjoint[s->coord[j]] = j;
            if (m->joints[j].driven == RIGMAT_DRIVEN_NONE)
                s->freec[s->nf++] = s->coord[j];
        }
    st = tree_order(s, err);
    if (st != RIGMAT_OK)
        goto fail;
    for (k = 0; k < L->nx; k++) {
        const rigmat_signal *sg = &L->states[k];
        if (sg->kind == RIGMAT_SIG_COORD)
            s->xq[s->coord[sg->index]] = k;
        else if (sg->kind == RIGMAT_SIG_RATE)
            s->xr[s->coord[sg->index]] = k;
        else if (sg->kind == RIGMAT_SIG_CURRENT)
            s->xi[sg->index] = k;
        else if (sg->kind == RIGMAT_SIG_SHAPING)
            s->xsh[sg->index] = k;
        else if (sg->kind == RIGMAT_SIG_BIAS)
            s->xbias[sg->index] = k;
        else if (sg->kind == RIGMAT_SIG_FILTERED)
            s->xfilt[sg->index] = k;
    }
    for (k = 0; k < L->nu; k++) {
        const rigmat_signal *sg = &L->inputs[k];
        if (sg->kind == RIGMAT_SIG_DRIVEN)
            s->uq[s->coord[sg->index]] = k;
        else if (sg->kind == RIGMAT_SIG_MOTOR)
            s->umot[sg->index] = k;
        else if (sg->kind == RIGMAT_SIG_FORCE)
            s->ufor[sg->index] = k;
        else if (sg->kind == RIGMAT_SIG_BIAS_NOISE)
            s->ubias[sg->index] = k;
        else if (sg->kind == RIGMAT_SIG_FILTER_NOISE)
            s->ufilt[sg->index] = k;
    }
    for (k = 0; k < nm; k++) {
        const rigmat_motor *mo = &m->motors[k];
        if (mo->joint == RIGMAT_NONE) {
            s->mstator[k] = mo->stator;
            s->mrotor[k] = mo->rotor;
            continue;
        }
        {
            const rigmat_joint *jt = &m->joints[mo->joint];
            if (!rigmat_joint_kind(jt->type)->has_coordinate) {
                st = RIGMAT_FAIL(err, RIGMAT_EMODEL, "motor '%s' is across fixed joint '%s'",
                        mo->name, jt->name);
                goto fail;
            } else if (rigmat_joint_kind(jt->type)->motor_linear) {
                s->mlin[k] = s->coord[mo->joint];
                /* rotation per travel: a pulley of radius r turns 1/r rad per m, a
                 * screw of lead l turns 2 pi / l rad per m */
                s->mk[k] = mo->radius_m > 0.0 ? 1.0 / mo->radius_m :
                           mo->lead_m > 0.0 ? 2.0 * M_PI / mo->lead_m : 0.0;
                if (s->mk[k] == 0.0) {
                    st = RIGMAT_FAIL(err, RIGMAT_EMODEL,
                            "motor '%s' across slider '%s' needs a radius or a lead", mo->name,
                            jt->name);
                    goto fail;
                }
            } else {
                s->mstator[k] = mo->mounted_on_child ? jt->child : jt->parent;
                s->mrotor[k] = mo->mounted_on_child ? jt->parent : jt->child;
            }
        }
    }
    /* theta_out(0) and the sign that makes motor_angle increase with the
     * rotor's own joint (or the across joint) */
    for (k = 0; k < n; k++)
        s->q[k] = s->qd[k] = 0;
    kinematics(s);
    for (k = 0; k < nm; k++) {
        const rigmat_motor *mo = &m->motors[k];
        double complex th, rt, bi;
        size_t c;
        motor_out(s, k, &th, s->tj, &rt, &bi);
        s->mtheta0[k] = creal(th);
        c = mo->joint != RIGMAT_NONE ? s->coord[mo->joint] :
            s->bjoint[s->mrotor[k]] != RIGMAT_NONE ? s->coord[s->bjoint[s->mrotor[k]]] :
                                                      RIGMAT_NONE;
        s->msign[k] = (c != RIGMAT_NONE && creal(s->tj[c]) < 0.0) ? -1.0 : 1.0;
    }
    st = check_needs(s, err);
    if (st != RIGMAT_OK)
        goto fail;
    if (s->n >= RIGMAT_MECH_RECURSIVE_MIN) {
        const char *why = NULL;
        st = rigmat_mech_set_path(s, RIGMAT_MECH_RECURSIVE, NULL);
        if (st == RIGMAT_ENOMEM)
            goto fail;
        st = RIGMAT_OK; /* an unsupported model keeps the mass matrix */
        if (s->rec == NULL && s->n > RIGMAT_MECH_MASS_MATRIX_MAX &&
                !rigmat_rec_supported(m, &why)) {
            st = RIGMAT_FAIL(err, RIGMAT_EMODEL,
                    "more than %d moving joints in a model the O(N) dynamics do not handle "
                    "(%s)", RIGMAT_MECH_MASS_MATRIX_MAX, why);
            rigmat_error_hint(err, "the mass-matrix method it needs grows as N^3 per "
                                   "evaluation; see README.md, \"Rules worth knowing\"");
            if (err != NULL)
                err->where = m->joints[s->cjoint[RIGMAT_MECH_MASS_MATRIX_MAX]].loc;
            goto fail;
        }
    }
    if (m->nclosures > 0 && !tree) {
        st = rigmat_closure_alloc(s, m, &s->cl, err);
        if (st != RIGMAT_OK)
            goto fail;
    }
    *out = s;
    return RIGMAT_OK;
fail:
    rigmat_mech_free(s);
    return st;
}

rigmat_status rigmat_mech_set_path(rigmat_mech *s, rigmat_mech_path path, rigmat_error *err)
{
    const char *why = NULL;

    rigmat_rec_free(s->rec);
    s->rec = NULL;
    if (path == RIGMAT_MECH_MASS_MATRIX)
        return RIGMAT_OK;
    if (!rigmat_rec_supported(s->m, &why))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "the recursive dynamics do not apply: %s", why);
    {
        const rigmat_rec_view v = { s->m, s->n, s->nb, s->coord, s->cjoint, s->order, s->bjoint,
            s->mstator, s->mrotor, s->mlin, s->mk, s->umot, s->ufor, s->q, s->qd, s->qdd,
            s->ueff, s->cur, s->bp, s->bth, s->bv, s->bom, s->ba, s->bal, s->wout };
        s->rec = rigmat_rec_alloc(&v);
    }
    if (s->rec == NULL)
        return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
    return RIGMAT_OK;
}

rigmat_mech_path rigmat_mech_get_path(const rigmat_mech *s)
{
    return s->rec != NULL ? RIGMAT_MECH_RECURSIVE : RIGMAT_MECH_MASS_MATRIX;
}

/* ----------------------------------------------------- operating point */

static size_t input_named(const rigmat_layout *L, const char *name)
{
    size_t k;
    for (k = 0; k < L->nu; k++)
        if (strcmp(L->inputs[k].name, name) == 0)
            return k;
    return RIGMAT_NONE;
}

static size_t joint_named(const rigmat_model *m, const char *name)
{
    size_t j;
    for (j = 0; j < m->njoints; j++)
        if (strcmp(m->joints[j].name, name) == 0)
            return j;
    return RIGMAT_NONE;
}

static rigmat_status unknown_name(rigmat_error *err, const rigmat_setting *st, const char *what)
{
    (void)RIGMAT_FAIL(err, RIGMAT_EMODEL, "operating point: no %s named '%s'", what, st->name);
    if (err != NULL)
        err->where = st->loc;
    return RIGMAT_EMODEL;
}

rigmat_status rigmat_mech_operating_point(rigmat_mech *s, double *x, double *u,
        rigmat_error *err)
{
    const rigmat_model *m = s->m;
    const rigmat_layout *L = &s->canon;
    size_t k, nfilt;

    for (k = 0; k < L->nx; k++)
        x[k] = 0.0;
    for (k = 0; k < L->nu; k++)
        u[k] = 0.0;
    for (k = 0; k < m->nop_coordinates; k++) {
        const rigmat_setting *st = &m->op_coordinates[k];
        const size_t j = joint_named(m, st->name);
        const size_t c = j != RIGMAT_NONE ? s->coord[j] : RIGMAT_NONE;
        if (c == RIGMAT_NONE)
            return unknown_name(err, st, "moving joint");
        if (m->joints[j].dependent)
            continue; /* a guess for the assembly (rigmat_model_check_equations) */
        if (s->xq[c] != RIGMAT_NONE)
            x[s->xq[c]] = st->value;
        else
            u[s->uq[c]] = st->value;
    }
    for (k = 0; k < m->nop_rates; k++) {
        const rigmat_setting *st = &m->op_rates[k];
        const size_t j = joint_named(m, st->name);
        const size_t c = j != RIGMAT_NONE ? s->coord[j] : RIGMAT_NONE;
        if (c == RIGMAT_NONE)
            return unknown_name(err, st, "moving joint");
        if (m->joints[j].dependent) {
            (void)RIGMAT_FAIL(err, RIGMAT_EMODEL, "operating point: joint '%s' is a dependent "
                    "coordinate of a closed loop: its rate follows from the independent ones",
                    st->name);
            rigmat_error_hint(err, "give the rates of the independent coordinates only");
            if (err != NULL)
                err->where = st->loc;
            return RIGMAT_EMODEL;
        }
        if (s->xr[c] != RIGMAT_NONE)
            x[s->xr[c]] = st->value;
        else if (m->joints[j].driven == RIGMAT_DRIVEN_VELOCITY)
            u[s->uq[c]] = st->value;
        else if (st->value != 0.0) {
            (void)RIGMAT_FAIL(err, RIGMAT_EMODEL,
                    "operating point: position-driven joint '%s' has no rate to set", st->name);
            if (err != NULL)
                err->where = st->loc;
            return RIGMAT_EMODEL;
        }
    }
    for (k = 0; k < m->nop_inputs; k++) {
        const rigmat_setting *st = &m->op_inputs[k];
        const size_t i = input_named(L, st->name);
        if (i == RIGMAT_NONE)
            return unknown_name(err, st, "input");
        u[i] = st->value;
    }
    /* a shaping filter at rest passes its input through */
    for (k = 0; k < L->nu; k++)
        if (s->xsh[k] != RIGMAT_NONE)
            x[s->xsh[k]] = u[k];
    /* motor currents always follow (README.md, "Rules worth knowing"): the
     * circuit is linear in i, so with i = 0, L di/dt = V - pol Ke N w and
     * the steady current is that over R */
    if (m->nmotors > 0) {
        rigmat_status st;
        for (k = 0; k < m->nmotors; k++)
            if (s->xi[k] != RIGMAT_NONE)
                x[s->xi[k]] = 0.0;
        st = rigmat_mech_eval_real(s, x, u, s->fr, NULL, err);
        if (st != RIGMAT_OK)
            return st;
        for (k = 0; k < m->nmotors; k++)
            if (s->xi[k] != RIGMAT_NONE)
                x[s->xi[k]] = s->fr[s->xi[k]] * m->motors[k].inductance_h /
                        m->motors[k].resistance_ohm;
    }
    /* a sensor filter at rest holds the reading: with z = 0,
     * z' = 2 pi F reading (the reading does not depend on z) */
    nfilt = 0;
    for (k = 0; k < m->nsensors; k++)
        if (s->xfilt[k] != RIGMAT_NONE) {
            x[s->xfilt[k]] = 0.0;
            nfilt++;
        }
    if (nfilt > 0) {
        const rigmat_status st = rigmat_mech_eval_real(s, x, u, s->fr, NULL, err);
        if (st != RIGMAT_OK)
            return st;
        for (k = 0; k < m->nsensors; k++)
            if (s->xfilt[k] != RIGMAT_NONE)
                x[s->xfilt[k]] = s->fr[s->xfilt[k]] / (2.0 * M_PI * m->sensors[k].filter_hz);
    }
    return RIGMAT_OK;
}

int rigmat_mech_find_unknown(const rigmat_mech *s, const char *name, int *is_input,
        size_t *index)
{
    const rigmat_layout *L = &s->canon;
    const size_t j = joint_named(s->m, name);
    size_t k;

    if (j != RIGMAT_NONE && s->coord[j] != RIGMAT_NONE && s->m->joints[j].dependent)
        return 0; /* solved from the closures, not an unknown of its own */
    if (j != RIGMAT_NONE && s->coord[j] != RIGMAT_NONE) {
        const size_t c = s->coord[j];
        *is_input = s->xq[c] == RIGMAT_NONE;
        *index = *is_input ? s->uq[c] : s->xq[c];
        return 1;
    }
    for (k = 0; k < L->nx; k++)
        if (strcmp(L->states[k].name, name) == 0) {
            *is_input = 0;
            *index = k;
            return 1;
        }
    k = input_named(L, name);
    if (k != RIGMAT_NONE) {
        *is_input = 1;
        *index = k;
        return 1;
    }
    return 0;
}

/* ------------------------------------------------ hooks for closure.c */

void rigmat_mech_get_view(rigmat_mech *s, rigmat_mech_view *v)
{
    v->n = s->n;
    v->q = s->q;
    v->qd = s->qd;
    v->qdd = s->qdd;
    v->M = s->M;
    v->hb = s->hb;
    v->Q = s->Q;
    v->coord = s->coord;
    v->cjoint = s->cjoint;
}

void rigmat_mech_update_kinematics(rigmat_mech *s)
{
    kinematics(s);
}

void rigmat_mech_point(const rigmat_mech *s, size_t b, const double r[2], double complex p[2],
        double complex *J, double complex v[2], double complex a[2])
{
    double complex pp[2];
    point_kin(s, b, r, p != NULL ? p : pp, J, v, a);
}

void rigmat_mech_body(const rigmat_mech *s, size_t b, double complex *th, double complex *row,
        double complex *om, double complex *al)
{
    size_t c;
    *th = s->bth[b];
    *om = s->bom[b];
    *al = s->bal[b];
    if (row != NULL)
        for (c = 0; c < s->n; c++)
            row[c] = BJTH(s, b, c);
}
