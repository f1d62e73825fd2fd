/* firmware.c - the generator of `rigmat firmware` (see firmware.h).
 *
 * NAME.h is the `c` export of a result that carries the sampled model
 * (Ad, Bd, Gd, Cd, Dd, Ed, fd), the noise model (Qd, Rd, S), the
 * steady-state Kalman filter (gain, predictor gain, covariances) and the
 * operating point, followed by the declarations of the functions.  NAME.c
 * is, in order: the scalar macros of the real pass and src/emit/fwkernel.inc,
 * the dual number and src/emit/fwkernel.inc again, the model's table, the
 * maps between the model's layout and the evaluator's canonical order, and
 * src/emit/fwfilter.inc.  The texts of the two .inc files are compiled into
 * rigmat by the Makefile (build/fwtext.h).
 */
#include "firmware.h"
#include "emit.h"
#include "kinds.h"
#include "layout.h"
#include "linearize.h"
#include "mechanics.h"
#include "invariant.h"
#include "fwtext.h"

#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_blas.h>
#include <gsl/gsl_complex_math.h>
#include <gsl/gsl_eigen.h>
#include <gsl/gsl_math.h>

/* ------------------------------------------- the counting pass of the kernel */

enum { C_ADD, C_MUL, C_KM, C_DIV, C_SQRT, C_SIN, C_COS, C_N };

#define FW_R double
#define FW_MAX_NB RIGMAT_FW_MAX_ELEMENTS
#define FW_MAX_NJ RIGMAT_FW_MAX_ELEMENTS
#define FW_MAX_N RIGMAT_FW_MAX_ELEMENTS
#define FW_MAX_NM RIGMAT_FW_MAX_ELEMENTS
#define FW_MAX_NL RIGMAT_FW_MAX_ELEMENTS
#define FW_MAX_NFO RIGMAT_FW_MAX_ELEMENTS
#define FW_MAX_NS RIGMAT_FW_MAX_ELEMENTS
#define FW_MAX_NX RIGMAT_FW_MAX_SIGNALS
#define FW_MAX_NU RIGMAT_FW_MAX_SIGNALS
#define FW_MAX_NY RIGMAT_FW_MAX_SIGNALS
#define FW_COUNTING
/* one operation of kind *c, giving v */
static double fwc_n(unsigned long *c, double v)
{
    (*c)++;
    return v;
}
#define FW_NOPS C_N
#define S double
#define FW(name) fwc_##name
#define SC(k) ((double)(k))
#define SADD(a, b) fwc_n(&w->ops[C_ADD], (a) + (b))
#define SSUB(a, b) fwc_n(&w->ops[C_ADD], (a) - (b))
#define SMUL(a, b) fwc_n(&w->ops[C_MUL], (a) * (b))
#define SDIV(a, b) fwc_n(&w->ops[C_DIV], (a) / (b))
#define SKM(k, a) fwc_n(&w->ops[C_KM], (double)(k) * (a))
#define SSIN(a) fwc_n(&w->ops[C_SIN], sin(a))
#define SCOS(a) fwc_n(&w->ops[C_COS], cos(a))
#define SSQRT(a) fwc_n(&w->ops[C_SQRT], sqrt(a))
#define SVAL(a) (a)
#include "fwkernel.inc"
#undef S

/* ------------------------------------------------------------ the table */

static int idx(size_t v)
{
    return v == RIGMAT_NONE ? -1 : (int)v;
}

static rigmat_status too_big(rigmat_error *err, const char *what, size_t n, size_t limit)
{
    (void)RIGMAT_FAIL(err, RIGMAT_EMODEL,
            "the model has %zu %s: the firmware evaluator takes at most %zu", n, what, limit);
    rigmat_error_hint(err, "split the mechanism, or use the library's rigmat_system_eval on a "
                           "host");
    return RIGMAT_EMODEL;
}

/* The evaluator's limits on the counts of a model: bodies (with ground)
 * and coordinates as the caller knows them, the rest from m; states,
 * inputs and outputs from L. */
static rigmat_status check_counts(const rigmat_model *m, size_t nb, size_t ncoord,
        const rigmat_layout *L, rigmat_error *err)
{
    const size_t counts[] = { nb, m->njoints, ncoord, m->nmotors, m->nsprings + m->ndampers,
                              m->nforces, m->nsensors };
    const char *const words[] = { "bodies (with ground)", "joints", "coordinates", "motors",
                                  "springs and dampers", "forces", "sensors" };
    size_t i;

    for (i = 0; i < sizeof counts / sizeof counts[0]; i++)
        if (counts[i] > RIGMAT_FW_MAX_ELEMENTS)
            return too_big(err, words[i], counts[i], RIGMAT_FW_MAX_ELEMENTS);
    if (L->nx > RIGMAT_FW_MAX_SIGNALS || L->nu > RIGMAT_FW_MAX_SIGNALS ||
            L->ny > RIGMAT_FW_MAX_SIGNALS)
        return too_big(err, "states, inputs or outputs (one group)",
                GSL_MAX(L->nx, GSL_MAX(L->nu, L->ny)), RIGMAT_FW_MAX_SIGNALS);
    return RIGMAT_OK;
}

rigmat_status rigmat_firmware_fits(const rigmat_model *m, rigmat_error *err)
{
    /* a joint has at most one coordinate */
    return check_counts(m, m->nbodies, m->njoints, &m->layout, err);
}

/* The table of m (canonical order, from the equations mech). */
static rigmat_status fill_table(const rigmat_model *m, const rigmat_mech *mech, struct fw_model *t,
        rigmat_error *err)
{
    const rigmat_layout *C = rigmat_mech_canonical(mech);
    rigmat_mech_map mp;
    size_t i;

    rigmat_mech_map_get(mech, &mp);
    {
        const rigmat_status st = check_counts(m, mp.nb, mp.n, C, err);
        if (st != RIGMAT_OK)
            return st;
    }
    memset(t, 0, sizeof *t);
    t->nb = (int)mp.nb;
    t->n = (int)mp.n;
    t->nf = (int)mp.nf;
    t->nx = (int)C->nx;
    t->nu = (int)C->nu;
    t->ny = (int)C->ny;
    t->nm = (int)m->nmotors;
    t->nl = (int)(m->nsprings + m->ndampers);
    t->nfo = (int)m->nforces;
    t->ns = (int)m->nsensors;
    t->nj = (int)m->njoints;
    t->gx = -m->gravity_m_s2 * sin(m->slope_rad);
    t->gy = -m->gravity_m_s2 * cos(m->slope_rad);
    for (i = 0; i + 1 < mp.nb; i++)
        t->order[i] = idx(mp.order[i]);
    for (i = 0; i < mp.nb; i++) {
        const rigmat_body *bd = &m->bodies[i];
        t->body[i].mass = bd->mass_kg;
        t->body[i].inertia = bd->inertia_kgm2;
        t->body[i].com[0] = bd->com_m[0];
        t->body[i].com[1] = bd->com_m[1];
        t->body[i].joint = idx(mp.bjoint[i]);
    }
    for (i = 0; i < m->njoints; i++) {
        const rigmat_joint *jt = &m->joints[i];
        struct fw_joint *o = &t->joint[i];
        switch (jt->type) {
        case RIGMAT_JOINT_SLIDER: o->type = FW_J_SLIDER; break;
        case RIGMAT_JOINT_HINGE: o->type = FW_J_HINGE; break;
        case RIGMAT_JOINT_ROLLING: o->type = FW_J_ROLLING; break;
        case RIGMAT_JOINT_FIXED: o->type = FW_J_FIXED; break;
        default:
            goto unknown_joint;
        }
        switch (jt->driven) {
        case RIGMAT_DRIVEN_NONE: o->driven = FW_DRIVEN_NONE; break;
        case RIGMAT_DRIVEN_POSITION: o->driven = FW_DRIVEN_POSITION; break;
        case RIGMAT_DRIVEN_VELOCITY: o->driven = FW_DRIVEN_VELOCITY; break;
        case RIGMAT_DRIVEN_ACCELERATION: o->driven = FW_DRIVEN_ACCELERATION; break;
        default:
            goto unknown_joint;
        }
        o->parent = idx(jt->parent);
        o->child = idx(jt->child);
        o->coord = idx(mp.coord[i]);
        o->rotational = rigmat_joint_kind(jt->type)->rotational;
        o->world = jt->reference_world;
        o->at[0] = jt->at_m[0];
        o->at[1] = jt->at_m[1];
        o->angle = jt->angle_rad;
        o->axis[0] = jt->axis[0];
        o->axis[1] = jt->axis[1];
        o->radius = jt->radius_m;
        continue;
unknown_joint:
        (void)RIGMAT_FAIL(err, RIGMAT_EMODEL,
                "joint '%s' is of a kind the firmware evaluator does not cover", jt->name);
        rigmat_error_hint(err, "use the library's rigmat_system_eval for this model");
        if (err != NULL)
            err->where = jt->loc;
        return RIGMAT_EMODEL;
    }
    for (i = 0; i < mp.n; i++) {
        struct fw_coord *o = &t->coord[i];
        o->joint = idx(mp.cjoint[i]);
        o->xq = idx(mp.xq[i]);
        o->xr = idx(mp.xr[i]);
        o->uq = idx(mp.uq[i]);
        o->driven = t->joint[mp.cjoint[i]].driven;
    }
    for (i = 0; i < mp.nf; i++)
        t->freec[i] = idx(mp.freec[i]);
    for (i = 0; i < m->nmotors; i++) {
        const rigmat_motor *mo = &m->motors[i];
        const rigmat_drive_desc *dk = rigmat_drive_kind_desc(mo->drive);
        struct fw_motor *o = &t->motor[i];
        o->stator = idx(mp.mstator[i]);
        o->rotor = idx(mp.mrotor[i]);
        o->lin = idx(mp.mlin[i]);
        if (mp.mlin[i] != RIGMAT_NONE) {
            /* across a slider: the body holding the housing carries the
             * rotor's rate (mechanics.c, motor_stator) */
            const rigmat_joint *jt = &m->joints[mo->joint];
            o->stator = idx(mo->mounted_on_child ? jt->child : jt->parent);
        }
        if (RIGMAT_NEVER(o->stator < 0 || (o->lin < 0 && o->rotor < 0) || o->umot < 0))
            return RIGMAT_FAIL(err, RIGMAT_EINTERNAL, "motor '%s' has no bodies", mo->name);
        o->xi = idx(mp.xi[i]);
        o->umot = idx(mp.umot[i]);
        o->supply_scaled = dk->needs_supply;
        o->current_state = dk->has_current_state;
        o->neglected = mo->inductance_neglected;
        o->k = mp.mk[i];
        o->ratio = mo->gear_ratio;
        o->count = (double)mo->count;
        o->rotor_inertia = mo->rotor_inertia_kgm2;
        o->load_inertia = mo->load_inertia_kgm2;
        o->supply = mo->supply_v;
        o->polarity = mo->polarity;
        o->efficiency = mo->efficiency;
        o->kt = mo->torque_constant_nm_a;
        o->ke = mo->back_emf_v_s_rad;
        o->resistance = mo->resistance_ohm;
        o->inductance = mo->inductance_h;
        o->friction = mo->friction_nm_s_rad;
        o->sign = mp.msign[i];
        o->theta0 = mp.mtheta0[i];
    }
    for (i = 0; i < m->nsprings + m->ndampers; i++) {
        const int spring = i < m->nsprings;
        const rigmat_link *lk = spring ? &m->springs[i] : &m->dampers[i - m->nsprings];
        struct fw_link *o = &t->link[i];
        o->spring = spring;
        switch (lk->attach) {
        case RIGMAT_ATTACH_ACROSS: o->attach = FW_A_ACROSS; break;
        case RIGMAT_ATTACH_BETWEEN: o->attach = FW_A_BETWEEN; break;
        case RIGMAT_ATTACH_POINTS: o->attach = FW_A_POINTS; break;
        default:
            (void)RIGMAT_FAIL(err, RIGMAT_EMODEL,
                    "%s '%s' is attached in a way the firmware evaluator does not cover",
                    spring ? "spring" : "damper", lk->name);
            if (err != NULL)
                err->where = lk->loc;
            return RIGMAT_EMODEL;
        }
        o->joint = lk->attach == RIGMAT_ATTACH_ACROSS ? idx(lk->joint) : -1;
        o->body_a = lk->attach != RIGMAT_ATTACH_ACROSS ? idx(lk->body_a) : -1;
        o->body_b = lk->attach != RIGMAT_ATTACH_ACROSS ? idx(lk->body_b) : -1;
        o->pa[0] = lk->point_a_m[0];
        o->pa[1] = lk->point_a_m[1];
        o->pb[0] = lk->point_b_m[0];
        o->pb[1] = lk->point_b_m[1];
        o->stiffness = spring ? lk->stiffness : 0.0;
        o->rest = spring ? lk->rest : 0.0;
        o->coefficient = spring ? 0.0 : lk->coefficient;
    }
    for (i = 0; i < m->nforces; i++) {
        const rigmat_force *fo = &m->forces[i];
        struct fw_force *o = &t->force[i];
        switch (fo->kind) {
        case RIGMAT_FORCE_POINT: o->kind = FW_F_POINT; break;
        case RIGMAT_FORCE_TORQUE: o->kind = FW_F_TORQUE; break;
        case RIGMAT_FORCE_ACROSS: o->kind = FW_F_ACROSS; break;
        default:
            (void)RIGMAT_FAIL(err, RIGMAT_EMODEL,
                    "force '%s' is of a form the firmware evaluator does not cover", fo->name);
            if (err != NULL)
                err->where = fo->loc;
            return RIGMAT_EMODEL;
        }
        o->body = fo->kind != RIGMAT_FORCE_ACROSS ? idx(fo->body) : -1;
        o->frame_body = fo->frame_body;
        o->reacting = fo->kind == RIGMAT_FORCE_TORQUE ? idx(fo->reacting) : -1;
        o->joint = fo->kind == RIGMAT_FORCE_ACROSS ? idx(fo->joint) : -1;
        o->input = idx(mp.ufor[i]);
        o->at[0] = fo->at_m[0];
        o->at[1] = fo->at_m[1];
        o->dir[0] = fo->direction[0];
        o->dir[1] = fo->direction[1];
    }
    for (i = 0; i < m->nsensors; i++) {
        const rigmat_sensor *se = &m->sensors[i];
        struct fw_sensor *o = &t->sensor[i];
        static const int kinds[RIGMAT_SENSE_KIND_COUNT] = {
            [RIGMAT_SENSE_JOINT_POSITION] = FW_S_JOINT_POSITION,
            [RIGMAT_SENSE_JOINT_VELOCITY] = FW_S_JOINT_VELOCITY,
            [RIGMAT_SENSE_ANGLE] = FW_S_ANGLE,
            [RIGMAT_SENSE_RATE] = FW_S_RATE,
            [RIGMAT_SENSE_RELATIVE_ANGLE] = FW_S_RELATIVE_ANGLE,
            [RIGMAT_SENSE_RELATIVE_RATE] = FW_S_RELATIVE_RATE,
            [RIGMAT_SENSE_MOTOR_ANGLE] = FW_S_MOTOR_ANGLE,
            [RIGMAT_SENSE_POINT_POSITION] = FW_S_POINT_POSITION,
            [RIGMAT_SENSE_POINT_VELOCITY] = FW_S_POINT_VELOCITY,
            [RIGMAT_SENSE_SPECIFIC_FORCE] = FW_S_SPECIFIC_FORCE,
            [RIGMAT_SENSE_CURRENT] = FW_S_CURRENT,
            [RIGMAT_SENSE_DRIVE_FORCE] = FW_S_DRIVE_FORCE,
        };
        if ((unsigned)se->kind >= RIGMAT_SENSE_KIND_COUNT) {
            (void)RIGMAT_FAIL(err, RIGMAT_EMODEL,
                    "sensor '%s' is of a kind the firmware evaluator does not cover", se->name);
            if (err != NULL)
                err->where = se->loc;
            return RIGMAT_EMODEL;
        }
        o->kind = kinds[se->kind];
        o->joint = (se->kind == RIGMAT_SENSE_JOINT_POSITION ||
                           se->kind == RIGMAT_SENSE_JOINT_VELOCITY ||
                           se->kind == RIGMAT_SENSE_DRIVE_FORCE) ? idx(se->joint) : -1;
        o->body = idx(se->body);
        o->body_b = idx(se->body_b);
        o->motor = (se->kind == RIGMAT_SENSE_MOTOR_ANGLE || se->kind == RIGMAT_SENSE_CURRENT) ?
                idx(se->motor) : -1;
        o->counts = se->unit_counts;
        o->xfilt = idx(mp.xfilt[i]);
        o->ufilt = idx(mp.ufilt[i]);
        o->xbias = idx(mp.xbias[i]);
        o->at[0] = se->at_m[0];
        o->at[1] = se->at_m[1];
        o->axis[0] = se->axis[0];
        o->axis[1] = se->axis[1];
        o->cpr = se->unit_counts ? se->counts_per_rev / (2.0 * M_PI) : 0.0;
        o->gain = se->gain;
        o->offset = se->offset;
    }
    for (i = 0; i < C->nx; i++) {
        const rigmat_signal *sg = &C->states[i];
        struct fw_state *o = &t->state[i];
        o->aux = -1;
        switch (sg->kind) {
        case RIGMAT_SIG_COORD:
            o->kind = FW_X_COORD;
            o->index = idx(mp.coord[sg->index]);
            break;
        case RIGMAT_SIG_RATE:
            o->kind = FW_X_RATE;
            o->index = idx(mp.coord[sg->index]);
            break;
        case RIGMAT_SIG_CURRENT:
            o->kind = FW_X_CURRENT;
            o->index = idx(sg->index);
            break;
        case RIGMAT_SIG_SHAPING: {
            const rigmat_signal *in = &C->inputs[sg->index];
            const double fc = in->kind == RIGMAT_SIG_FORCE ? m->forces[in->index].bandwidth_hz :
                                                             m->joints[in->index].bandwidth_hz;
            o->kind = FW_X_SHAPING;
            o->index = idx(sg->index);
            o->aux = idx(sg->index);
            o->rate = 2.0 * M_PI * fc;
            break;
        }
        case RIGMAT_SIG_FILTERED:
            o->kind = FW_X_FILTERED;
            o->index = idx(sg->index);
            o->aux = idx(mp.ufilt[sg->index]);
            o->rate = 2.0 * M_PI * m->sensors[sg->index].filter_hz;
            break;
        case RIGMAT_SIG_BIAS:
            o->kind = FW_X_BIAS;
            o->index = idx(sg->index);
            o->aux = idx(mp.ubias[sg->index]);
            o->rate = m->sensors[sg->index].bias_tau_s > 0.0 ?
                    1.0 / m->sensors[sg->index].bias_tau_s : 0.0;
            break;
        default:
            (void)RIGMAT_FAIL(err, RIGMAT_EMODEL,
                    "state '%s' is of a kind the firmware evaluator does not cover", sg->name);
            return RIGMAT_EMODEL;
        }
    }
    for (i = 0; i < C->nu; i++)
        t->xsh[i] = idx(mp.xsh[i]);
    for (i = 0; i < C->ny; i++)
        t->yout[i] = idx(C->outputs[i].index);
    return RIGMAT_OK;
}

/* ---------------------------------------------------------- writing text */

struct out {
    FILE *f;
    int fl;        /* float */
    double beyond; /* the first value a float cannot hold (or that is not finite), else 0 */
};

static void num(struct out *o, double v)
{
    char buf[64];
    if (o->beyond == 0.0 && (!isfinite(v) || (o->fl && fabs(v) > (double)FLT_MAX)))
        o->beyond = isfinite(v) ? v : HUGE_VAL;
    rigmat_emit_c_number(buf, sizeof buf, v, o->fl);
    fputs(buf, o->f);
}

static void pair(struct out *o, const double v[2])
{
    fputs("{ ", o->f);
    num(o, v[0]);
    fputs(", ", o->f);
    num(o, v[1]);
    fputs(" }", o->f);
}

static void ints(struct out *o, const int *v, int n)
{
    int i;
    fputs("{ ", o->f);
    for (i = 0; i < (n > 0 ? n : 1); i++)
        fprintf(o->f, "%s%d", i ? ", " : "", n > 0 ? v[i] : 0);
    fputs(" }", o->f);
}

#define MAX1(n) ((n) > 0 ? (n) : 1)

static void write_table(struct out *o, const struct fw_model *t)
{
    FILE *f = o->f;
    int i;

    fputs("\n/* The model, in the evaluator's order (src/emit/fwkernel.inc in rigmat's\n"
          " * sources describes every field). */\n"
          "static const struct fw_model fw_md = {\n", f);
    fprintf(f, "    %d, %d, %d, %d, %d, %d, %d, %d, %d, %d, %d, "
               "/* nb n nf nx nu ny nm nl nfo ns nj */\n    ",
            t->nb, t->n, t->nf, t->nx, t->nu, t->ny, t->nm, t->nl, t->nfo, t->ns, t->nj);
    num(o, t->gx);
    fputs(", ", f);
    num(o, t->gy);
    fputs(", /* gravity, m/s^2 */\n    ", f);
    ints(o, t->order, t->nb - 1);
    fputs(", /* bodies, parents first */\n    { /* bodies: mass, inertia, com, joint */\n", f);
    for (i = 0; i < MAX1(t->nb); i++) {
        const struct fw_body *b = &t->body[i];
        fputs("        { ", f);
        num(o, b->mass);
        fputs(", ", f);
        num(o, b->inertia);
        fputs(", ", f);
        pair(o, b->com);
        fprintf(f, ", %d },\n", b->joint);
    }
    fputs("    },\n    { /* joints: type parent child coord rotational world driven, at, angle, "
          "axis, radius */\n", f);
    for (i = 0; i < MAX1(t->nj); i++) {
        const struct fw_joint *j = &t->joint[i];
        fprintf(f, "        { %d, %d, %d, %d, %d, %d, %d, ", j->type, j->parent, j->child,
                j->coord, j->rotational, j->world, j->driven);
        pair(o, j->at);
        fputs(", ", f);
        num(o, j->angle);
        fputs(", ", f);
        pair(o, j->axis);
        fputs(", ", f);
        num(o, j->radius);
        fputs(" },\n", f);
    }
    fputs("    },\n    { /* coordinates: joint, q state, rate state, driven input, driven */\n",
            f);
    for (i = 0; i < MAX1(t->n); i++) {
        const struct fw_coord *c = &t->coord[i];
        fprintf(f, "        { %d, %d, %d, %d, %d },\n", c->joint, c->xq, c->xr, c->uq, c->driven);
    }
    fputs("    },\n    ", f);
    ints(o, t->freec, t->nf);
    fputs(", /* free coordinates */\n    { /* motors */\n", f);
    for (i = 0; i < MAX1(t->nm); i++) {
        const struct fw_motor *mo = &t->motor[i];
        const double v[] = { mo->k, mo->ratio, mo->count, mo->rotor_inertia, mo->load_inertia,
                             mo->supply, mo->polarity, mo->efficiency, mo->kt, mo->ke,
                             mo->resistance, mo->inductance, mo->friction, mo->sign,
                             mo->theta0 };
        size_t k;
        fprintf(f, "        { %d, %d, %d, %d, %d, %d, %d, %d", mo->stator, mo->rotor, mo->lin,
                mo->xi, mo->umot, mo->supply_scaled, mo->current_state, mo->neglected);
        for (k = 0; k < sizeof v / sizeof v[0]; k++) {
            fputs(", ", f);
            num(o, v[k]);
        }
        fputs(" },\n", f);
    }
    fputs("    },\n    { /* springs, then dampers */\n", f);
    for (i = 0; i < MAX1(t->nl); i++) {
        const struct fw_link *l = &t->link[i];
        fprintf(f, "        { %d, %d, %d, %d, %d, ", l->spring, l->attach, l->joint, l->body_a,
                l->body_b);
        pair(o, l->pa);
        fputs(", ", f);
        pair(o, l->pb);
        fputs(", ", f);
        num(o, l->stiffness);
        fputs(", ", f);
        num(o, l->rest);
        fputs(", ", f);
        num(o, l->coefficient);
        fputs(" },\n", f);
    }
    fputs("    },\n    { /* forces */\n", f);
    for (i = 0; i < MAX1(t->nfo); i++) {
        const struct fw_force *fo = &t->force[i];
        fprintf(f, "        { %d, %d, %d, %d, %d, %d, ", fo->kind, fo->body, fo->frame_body,
                fo->reacting, fo->joint, fo->input);
        pair(o, fo->at);
        fputs(", ", f);
        pair(o, fo->dir);
        fputs(" },\n", f);
    }
    fputs("    },\n    { /* sensors */\n", f);
    for (i = 0; i < MAX1(t->ns); i++) {
        const struct fw_sensor *s = &t->sensor[i];
        fprintf(f, "        { %d, %d, %d, %d, %d, %d, %d, %d, %d, ", s->kind, s->joint, s->body,
                s->body_b, s->motor, s->counts, s->xfilt, s->ufilt, s->xbias);
        pair(o, s->at);
        fputs(", ", f);
        pair(o, s->axis);
        fputs(", ", f);
        num(o, s->cpr);
        fputs(", ", f);
        num(o, s->gain);
        fputs(", ", f);
        num(o, s->offset);
        fputs(" },\n", f);
    }
    fputs("    },\n    { /* states: kind, index, aux, rate */\n", f);
    for (i = 0; i < MAX1(t->nx); i++) {
        const struct fw_state *s = &t->state[i];
        fprintf(f, "        { %d, %d, %d, ", s->kind, s->index, s->aux);
        num(o, s->rate);
        fputs(" },\n", f);
    }
    fputs("    },\n    ", f);
    ints(o, t->xsh, t->nu);
    fputs(", /* shaping state of each input */\n    ", f);
    ints(o, t->yout, t->ny);
    fputs(" /* sensor of each output */\n};\n", f);
}

static void put_lines(FILE *f, const char *const *lines)
{
    size_t i;
    for (i = 0; lines[i] != NULL; i++)
        fputs(lines[i], f);
}

/* The scalar macros of a pass. */
static void pass_macros(FILE *f, int dual, int fl)
{
    const char *suf = fl ? "f" : "";

    fprintf(f, "\n/* ---- pass %d: %s ---- */\n", dual ? 2 : 1,
            dual ? "dual numbers (value, tangent) for the exact Jacobians" : "real scalars, f and h");
    if (!dual) {
        fputs("#define S FW_R\n#define FW(name) fwr_##name\n#define SC(k) ((FW_R)(k))\n"
              "#define SADD(a, b) ((a) + (b))\n#define SSUB(a, b) ((a) - (b))\n"
              "#define SMUL(a, b) ((a) * (b))\n#define SDIV(a, b) ((a) / (b))\n"
              "#define SKM(k, a) ((k) * (a))\n", f);
        fprintf(f, "#define SSIN(a) sin%s(a)\n#define SCOS(a) cos%s(a)\n#define SSQRT(a) sqrt%s(a)\n"
                   "#define SVAL(a) (a)\n", suf, suf, suf);
        return;
    }
    fputs("typedef struct fw_dual {\n    FW_R v, d; /* value and tangent */\n} fw_dual;\n\n"
          "static fw_dual fw_dc(FW_R k)\n{\n    fw_dual r;\n    r.v = k;\n    r.d = 0;\n"
          "    return r;\n}\n\n"
          "static fw_dual fw_dadd(fw_dual a, fw_dual b)\n{\n    a.v += b.v;\n    a.d += b.d;\n"
          "    return a;\n}\n\n"
          "static fw_dual fw_dsub(fw_dual a, fw_dual b)\n{\n    a.v -= b.v;\n    a.d -= b.d;\n"
          "    return a;\n}\n\n"
          "static fw_dual fw_dmul(fw_dual a, fw_dual b)\n{\n    fw_dual r;\n    r.v = a.v * b.v;\n"
          "    r.d = a.d * b.v + a.v * b.d;\n    return r;\n}\n\n"
          "static fw_dual fw_ddiv(fw_dual a, fw_dual b)\n{\n    fw_dual r;\n    r.v = a.v / b.v;\n"
          "    r.d = (a.d - r.v * b.d) / b.v;\n    return r;\n}\n\n"
          "static fw_dual fw_dkm(FW_R k, fw_dual a)\n{\n    a.v *= k;\n    a.d *= k;\n"
          "    return a;\n}\n\n", f);
    fprintf(f, "static fw_dual fw_dsin(fw_dual a)\n{\n    fw_dual r;\n    r.v = sin%s(a.v);\n"
               "    r.d = cos%s(a.v) * a.d;\n    return r;\n}\n\n"
               "static fw_dual fw_dcos(fw_dual a)\n{\n    fw_dual r;\n    r.v = cos%s(a.v);\n"
               "    r.d = -sin%s(a.v) * a.d;\n    return r;\n}\n\n"
               "static fw_dual fw_dsqrt(fw_dual a)\n{\n    fw_dual r;\n    r.v = sqrt%s(a.v);\n"
               "    r.d = a.d / (r.v + r.v);\n    return r;\n}\n\n",
            suf, suf, suf, suf, suf);
    fputs("#define S fw_dual\n#define FW(name) fwd_##name\n#define SC(k) fw_dc((FW_R)(k))\n"
          "#define SADD(a, b) fw_dadd(a, b)\n#define SSUB(a, b) fw_dsub(a, b)\n"
          "#define SMUL(a, b) fw_dmul(a, b)\n#define SDIV(a, b) fw_ddiv(a, b)\n"
          "#define SKM(k, a) fw_dkm((FW_R)(k), a)\n#define SSIN(a) fw_dsin(a)\n"
          "#define SCOS(a) fw_dcos(a)\n#define SSQRT(a) fw_dsqrt(a)\n#define SVAL(a) ((a).v)\n",
            f);
}

static void undef_pass(FILE *f)
{
    fputs("#undef S\n#undef FW\n#undef SC\n#undef SADD\n#undef SSUB\n#undef SMUL\n#undef SDIV\n"
          "#undef SKM\n#undef SSIN\n#undef SCOS\n#undef SSQRT\n#undef SVAL\n#undef FW_BJ\n"
          "#undef FW_BJTH\n", f);
}

/* -------------------------------------------------------- operation counts */

static void count_ops(const struct fw_model *t, const double *xc, const double *uc, size_t dirs,
        rigmat_fw_counts *out, double *scratch, fwc_ws *w)
{
    double *fc = scratch, *yc = scratch + RIGMAT_FW_MAX_SIGNALS;
    unsigned long full[C_N];
    int k;

    memset(w->ops, 0, sizeof w->ops);
    (void)fwc_eval(t, w, xc, uc, fc, NULL);
    out->f[RIGMAT_FW_ADD] = w->ops[C_ADD];
    out->f[RIGMAT_FW_MUL] = w->ops[C_MUL] + w->ops[C_KM];
    out->f[RIGMAT_FW_DIV] = w->ops[C_DIV];
    out->f[RIGMAT_FW_SQRT] = w->ops[C_SQRT];
    out->f[RIGMAT_FW_SIN] = w->ops[C_SIN];
    out->f[RIGMAT_FW_COS] = w->ops[C_COS];
    memset(w->ops, 0, sizeof w->ops);
    (void)fwc_eval(t, w, xc, uc, NULL, yc);
    out->h[RIGMAT_FW_ADD] = w->ops[C_ADD];
    out->h[RIGMAT_FW_MUL] = w->ops[C_MUL] + w->ops[C_KM];
    out->h[RIGMAT_FW_DIV] = w->ops[C_DIV];
    out->h[RIGMAT_FW_SQRT] = w->ops[C_SQRT];
    out->h[RIGMAT_FW_SIN] = w->ops[C_SIN];
    out->h[RIGMAT_FW_COS] = w->ops[C_COS];
    memset(w->ops, 0, sizeof w->ops);
    (void)fwc_eval(t, w, xc, uc, fc, yc);
    for (k = 0; k < C_N; k++)
        full[k] = w->ops[k];
    /* the cost of each dual operation (the helpers written by pass_macros) */
    out->jac[RIGMAT_FW_ADD] = 2 * full[C_ADD] + full[C_MUL] + full[C_DIV] + full[C_SQRT];
    out->jac[RIGMAT_FW_MUL] =
            3 * full[C_MUL] + 2 * full[C_KM] + full[C_DIV] + full[C_SIN] + full[C_COS];
    out->jac[RIGMAT_FW_DIV] = 2 * full[C_DIV] + full[C_SQRT];
    out->jac[RIGMAT_FW_SQRT] = full[C_SQRT];
    out->jac[RIGMAT_FW_SIN] = full[C_SIN] + full[C_COS];
    out->jac[RIGMAT_FW_COS] = full[C_SIN] + full[C_COS];
    for (k = 0; k < RIGMAT_FW_NCOUNTS; k++)
        out->jac[k] *= (unsigned long)dirs;
}

static void put_counts(FILE *f, const char *what, const unsigned long *c)
{
    fprintf(f, " *   %-15s %lu add/sub, %lu mul, %lu div, %lu sqrt, %lu sin, %lu cos\n", what,
            c[RIGMAT_FW_ADD], c[RIGMAT_FW_MUL], c[RIGMAT_FW_DIV], c[RIGMAT_FW_SQRT],
            c[RIGMAT_FW_SIN], c[RIGMAT_FW_COS]);
}

/* ---------------------------------------------------------- the header data */

static size_t find_sig(const rigmat_signal *arr, size_t n, rigmat_signal_kind kind, size_t index)
{
    size_t k;
    for (k = 0; k < n; k++)
        if (arr[k].kind == kind && arr[k].index == index)
            return k;
    return RIGMAT_NONE;
}

static rigmat_result *data_result(const rigmat_fw_input *in, const gsl_matrix *cross)
{
    const rigmat_model *m = in->m;
    const rigmat_layout *L = &m->layout;
    const rigmat_dlti *d = in->d;
    const rigmat_noise *nz = in->nz;
    rigmat_result *r = rigmat_result_for_layout("firmware", m->name, L);

    if (r == NULL)
        return NULL;
    rigmat_result_key(r, "period");
    rigmat_result_number(r, d->period_s, "s");
    rigmat_result_key(r, "method");
    rigmat_result_string(r, rigmat_method_name(d->method));
    rigmat_result_key(r, "Ad");
    rigmat_result_matrix(r, d->Ad, d->nx, d->nx, L->states, L->states);
    rigmat_result_key(r, "Bd");
    rigmat_result_matrix(r, d->Bd, d->nx, d->nu, L->states, L->inputs);
    rigmat_result_key(r, "Gd");
    rigmat_result_matrix(r, d->Gd, d->nx, d->nw, L->states, L->inputs + d->nu);
    rigmat_result_key(r, "Cd");
    rigmat_result_matrix(r, d->Cd, d->ny, d->nx, L->outputs, L->states);
    rigmat_result_key(r, "Dd");
    rigmat_result_matrix(r, d->Dd, d->ny, d->nu, L->outputs, L->inputs);
    rigmat_result_key(r, "Ed");
    rigmat_result_matrix(r, d->Ed, d->ny, d->nw, L->outputs, L->inputs + d->nu);
    rigmat_result_key(r, "fd");
    rigmat_result_vector(r, in->fd, d->nx, L->states);
    rigmat_result_key(r, "Qd");
    rigmat_result_matrix(r, nz->Qd, d->nx, d->nx, L->states, L->states);
    rigmat_result_key(r, "Rd");
    rigmat_result_matrix(r, nz->Rd, d->ny, d->ny, L->outputs, L->outputs);
    if (nz->S != NULL) {
        rigmat_result_key(r, "S");
        rigmat_result_matrix(r, nz->S, d->nx, d->ny, L->states, L->outputs);
    }
    if (in->kf != NULL) {
        rigmat_result_key(r, "kalman");
        rigmat_result_object(r);
        rigmat_result_key(r, "gain");
        rigmat_result_matrix(r, in->kf->gain, d->nx, d->ny, L->states, L->outputs);
        rigmat_result_key(r, "predictor_gain");
        rigmat_result_matrix(r, in->kf->predictor_gain, d->nx, d->ny, L->states, L->outputs);
        rigmat_result_key(r, "prior_covariance");
        rigmat_result_matrix(r, in->kf->prior, d->nx, d->nx, L->states, L->states);
        rigmat_result_key(r, "posterior_covariance");
        rigmat_result_matrix(r, in->kf->posterior, d->nx, d->nx, L->states, L->states);
        if (cross != NULL) {
            rigmat_result_key(r, "cross");
            rigmat_result_matrix(r, cross, d->nx, d->ny, L->states, L->outputs);
        }
        rigmat_result_close(r);
    }
    rigmat_result_key(r, "operating_point");
    rigmat_result_object(r);
    rigmat_result_key(r, "x");
    rigmat_result_vector(r, in->lti->x0, in->lti->nx, L->states);
    rigmat_result_export_name(r, "x0");
    rigmat_result_key(r, "u");
    rigmat_result_vector(r, in->lti->u0, in->lti->nu, L->inputs);
    rigmat_result_export_name(r, "u0");
    rigmat_result_key(r, "y");
    rigmat_result_vector(r, in->lti->y0, in->lti->ny, L->outputs);
    rigmat_result_export_name(r, "y0");
    rigmat_result_close(r);
    return r;
}

void rigmat_firmware_name(const rigmat_model *m, const char *name, char *buf, size_t len)
{
    rigmat_emit_c_ident(buf, len, name != NULL ? name : m->name, 0, "rigmat_model");
}

unsigned rigmat_firmware_substeps(const rigmat_lti *lti, double period_s)
{
    const size_t n = lti->nx;
    gsl_matrix *a = n > 0 && lti->A != NULL ? gsl_matrix_alloc(n, n) : NULL;
    gsl_vector_complex *ev = n > 0 ? gsl_vector_complex_alloc(n) : NULL;
    gsl_eigen_nonsymm_workspace *w = n > 0 ? gsl_eigen_nonsymm_alloc(n) : NULL;
    double rho = 0.0, k;
    size_t i, j;

    if (a != NULL && ev != NULL && w != NULL) {
        gsl_matrix_memcpy(a, lti->A);
        if (gsl_eigen_nonsymm(a, ev, w) == GSL_SUCCESS) {
            for (i = 0; i < n; i++)
                rho = GSL_MAX(rho, gsl_complex_abs(gsl_vector_complex_get(ev, i)));
        } else {
            /* no eigenvalues: the infinity norm bounds the spectral radius */
            for (i = 0; i < n; i++) {
                double row = 0.0;
                for (j = 0; j < n; j++)
                    row += fabs(gsl_matrix_get(lti->A, i, j));
                rho = GSL_MAX(rho, row);
            }
        }
    }
    if (a != NULL)
        gsl_matrix_free(a);
    if (ev != NULL)
        gsl_vector_complex_free(ev);
    if (w != NULL)
        gsl_eigen_nonsymm_free(w);
    k = ceil(period_s * rho / RIGMAT_FW_RK4_REACH);
    if (!(k >= 1.0))
        return 1;
    return k > 100000.0 ? 100000u : (unsigned)k;
}

/* The declarations after the data in NAME.h. */
static char *header_tail(const rigmat_fw_input *in, const char *low, const char *up, int fl,
        unsigned substeps, const rigmat_fw_counts *cn, size_t dirs, int filters)
{
    const rigmat_layout *L = &in->m->layout;
    char *buf = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&buf, &len);

    if (f == NULL)
        return NULL;
    fprintf(f, "\n/* ---- the nonlinear model and the filters (%s.c) ----\n"
               " * Units: SI, absolute values (not deviations from the operating point);\n"
               " * vectors in the order of the enums above; matrices row-major.  u is all\n"
               " * %s_NU inputs, control then disturbance, except in the filters, whose u is\n"
               " * the %s_NC control inputs (the disturbances are taken at their operating\n"
               " * values, their mean).  Nothing allocates; stack only.\n"
               " *\n * Operation counts of one call, as written (the compiler may fold some):\n",
            low, up, up);
    put_counts(f, "f:", cn->f);
    put_counts(f, "h:", cn->h);
    put_counts(f, "jacobians:", cn->jac);
    fprintf(f, " * (the Jacobians: %zu dual evaluations of f and h, one per state and input)\n"
               " */\n", dirs);
    fprintf(f, "#define %s_NX %zu /* states */\n#define %s_NU %zu /* inputs: control, then "
               "disturbance */\n#define %s_NC %zu /* control inputs */\n#define %s_NY %zu /* "
               "outputs */\n",
            up, L->nx, up, L->nu, up, L->nu_control, up, L->ny);
    fprintf(f, "typedef %s %s_real;\n\n", fl ? "float" : "double", low);
    fprintf(f, "/* xdot = f(x, u) */\nvoid %s_f(const %s_real *x, const %s_real *u, %s_real *xdot);\n",
            low, low, low, low);
    fprintf(f, "/* y = h(x, u) */\nvoid %s_h(const %s_real *x, const %s_real *u, %s_real *y);\n",
            low, low, low, low);
    fprintf(f, "/* A = df/dx (NX x NX), B = df/du (NX x NU), C = dh/dx (NY x NX), D = dh/du\n"
               " * (NY x NU) at (x, u), exact (forward-mode dual numbers); any may be NULL */\n"
               "void %s_jacobians(const %s_real *x, const %s_real *u, %s_real *A, %s_real *B,\n"
               "        %s_real *C, %s_real *D);\n",
            low, low, low, low, low, low, low);
    if (filters) {
        fprintf(f,
                "\n/* Steady-state Kalman filter (the gain above, on deviations from the\n"
                " * operating point; the sampled model is ZOH at %s_period):\n"
                " *   update:  x+ = x- + kalman_gain (y - y-),  y- = y0 + Cd (x- - x0) + Dd (u - u0)\n"
                " *   predict: x-[k+1] = x0 + fd + Ad (x+ - x0) + Bd (u - u0)%s\n"
                " * Call update with y[k] and u[k], then predict with u[k]. */\n"
                "typedef struct %s_kf {\n    %s_real x[%s_NX];          /* the estimate */\n"
                "    %s_real innovation[%s_NY]; /* y - y- of the last update */\n} %s_kf;\n"
                "void %s_kf_init(%s_kf *kf); /* at the operating point */\n"
                "void %s_kf_update(%s_kf *kf, const %s_real *u, const %s_real *y);\n"
                "void %s_kf_predict(%s_kf *kf, const %s_real *u);\n",
                low, in->nz->S != NULL ? " + kalman_cross innovation" : "", low, low, up, low,
                up, low, low, low, low, low, low, low, low, low, low);
        fprintf(f,
                "\n/* Extended Kalman filter.  Predict: the nonlinear model over one period by\n"
                " * %u step%s of classical fourth-order Runge-Kutta (%s_EKF_SUBSTEPS, chosen so\n"
                " * that the step times the largest |eigenvalue| of A at the operating point\n"
                " * is at most %g), the covariance through the exact Jacobian of those steps\n"
                " * (the stage sensitivities of RK4 from the exact Jacobians of f):\n"
                " * P = Phi P Phi^T + Qd.  Update: y- = h(x, u), C exact, S = C P C^T + Rd,\n"
                " * K = P C^T S^-1 (Cholesky), P in Joseph form with Rd.  The cross-covariance\n"
                " * S of the noise model is not used.  Starts at the operating point with the\n"
                " * steady-state prior covariance.  update returns 0, or 1 (estimate left\n"
                " * alone) when C P C^T + Rd is not positive definite. */\n"
                "#define %s_EKF_SUBSTEPS %u\n"
                "typedef struct %s_ekf {\n    %s_real x[%s_NX];          /* the estimate */\n"
                "    %s_real P[%s_NX * %s_NX];  /* its covariance, row-major */\n} %s_ekf;\n"
                "void %s_ekf_init(%s_ekf *ekf);\n"
                "int %s_ekf_update(%s_ekf *ekf, const %s_real *u, const %s_real *y);\n"
                "void %s_ekf_predict(%s_ekf *ekf, const %s_real *u);\n",
                substeps, substeps == 1 ? "" : "s", up, RIGMAT_FW_RK4_REACH, up, substeps, low, low, up, low, up, up,
                low, low, low, low, low, low, low, low, low, low);
    } else {
        fprintf(f, "\n/* No Kalman filters: %s. */\n",
                L->ny == 0 ? "the model has no sensors"
                           : "no steady-state filter exists for this noise model (`rigmat gains` "
                             "says why)");
    }
    fprintf(f, "#define %s_HAS_FILTERS %d\n", up, filters);
    if (fclose(f) != 0) {
        free(buf);
        return NULL;
    }
    return buf;
}

rigmat_status rigmat_firmware_write(const rigmat_fw_input *in, const rigmat_emit_opts *o,
        FILE *hf, FILE *cf, rigmat_fw_counts *counts, rigmat_error *err)
{
    const rigmat_model *m = in->m;
    const rigmat_layout *L = &m->layout;
    const int fl = o->ctype_float;
    struct fw_model *t = NULL;
    fwc_ws *w = NULL;
    rigmat_system *sys = NULL;
    rigmat_result *r = NULL;
    gsl_matrix *cross = NULL;
    double *xc = NULL, *uc = NULL, *scratch = NULL;
    char *tail = NULL, low[64], up[64];
    rigmat_fw_counts cn;
    rigmat_emit_opts eo = *o;
    rigmat_status st;
    const rigmat_layout *C;
    const int filters = in->kf != NULL && L->ny > 0;
    unsigned substeps;
    size_t k, *ymap = NULL;
    struct out out;

    rigmat_emit_c_ident(low, sizeof low, o->name != NULL ? o->name : m->name, 0, "rigmat_model");
    rigmat_emit_c_ident(up, sizeof up, o->name != NULL ? o->name : m->name, 1, "RIGMAT_MODEL");
    if (L->nx == 0)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "the model has no states: no firmware to write");
    if (m->nclosures > 0) {
        /* the evaluator walks a tree; a loop needs the Newton assembly of
         * src/mech/closure.c, which it does not carry */
        (void)RIGMAT_FAIL(err, RIGMAT_EMODEL,
                "closure '%s' closes a loop: the firmware evaluator covers open trees only",
                m->closures[0].name);
        rigmat_error_hint(err, "use `rigmat discretize --format c` for the sampled model of a "
                               "linkage, or the library's rigmat_system_eval on a host");
        if (err != NULL)
            err->where = m->closures[0].loc;
        return RIGMAT_EMODEL;
    }
    st = rigmat_system_alloc(m, &sys, err);
    if (st != RIGMAT_OK)
        return st;
    C = rigmat_mech_canonical(rigmat_system_mech(sys));
    t = calloc(1, sizeof *t);
    w = calloc(1, sizeof *w);
    xc = calloc(C->nx + 1, sizeof *xc);
    uc = calloc(C->nu + 1, sizeof *uc);
    scratch = calloc(2 * RIGMAT_FW_MAX_SIGNALS, sizeof *scratch);
    ymap = calloc(L->ny + 1, sizeof *ymap);
    if (t == NULL || w == NULL || xc == NULL || uc == NULL || scratch == NULL || ymap == NULL) {
        st = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
        goto done;
    }
    st = fill_table(m, rigmat_system_mech(sys), t, err);
    if (st != RIGMAT_OK)
        goto done;
    /* the canonical operating point: the model's, with the layout's x0, u0 */
    st = rigmat_mech_operating_point(rigmat_system_mech(sys), xc, uc, err);
    if (st != RIGMAT_OK)
        goto done;
    for (k = 0; k < L->nx; k++)
        xc[rigmat_system_state_canon(sys, k)] = gsl_vector_get(in->lti->x0, k);
    for (k = 0; k < L->nu; k++)
        uc[rigmat_system_input_canon(sys, k)] = gsl_vector_get(in->lti->u0, k);
    for (k = 0; k < L->ny; k++) {
        ymap[k] = find_sig(C->outputs, C->ny, L->outputs[k].kind, L->outputs[k].index);
        if (RIGMAT_NEVER(ymap[k] == RIGMAT_NONE)) {
            st = RIGMAT_FAIL(err, RIGMAT_EINTERNAL, "the layout does not match the model");
            goto done;
        }
    }
    count_ops(t, xc, uc, L->nx + L->nu, &cn, scratch, w);
    if (counts != NULL)
        *counts = cn;
    /* the predictor's cross term Kp - Ad M, with a cross-covariance S only */
    if (filters && in->nz->S != NULL) {
        cross = gsl_matrix_alloc(L->nx, L->ny);
        if (cross == NULL) {
            st = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
            goto done;
        }
        gsl_matrix_memcpy(cross, in->kf->predictor_gain);
        gsl_blas_dgemm(CblasNoTrans, CblasNoTrans, -1.0, in->d->Ad, in->kf->gain, 1.0, cross);
    }
    substeps = rigmat_firmware_substeps(in->lti, in->d->period_s);
    tail = header_tail(in, low, up, fl, substeps, &cn, L->nx + L->nu, filters);
    r = data_result(in, cross);
    if (tail == NULL || r == NULL) {
        st = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
        goto done;
    }
    eo.name = low;
    eo.c_tail = tail;
    st = rigmat_result_write(r, RIGMAT_FORMAT_C, &eo, hf, NULL, err);
    if (st != RIGMAT_OK)
        goto done;

    /* NAME.c */
    out.f = cf;
    out.fl = fl;
    out.beyond = 0.0;
    fprintf(cf, "/* %s.c - the nonlinear model, its exact Jacobians, a steady-state Kalman\n"
                " * filter and an extended Kalman filter for firmware; %s.h says what each\n"
                " * function does.\n",
            low, low);
    fprintf(cf, " * generated by rigmat %s; do not edit (regenerate it from the model)\n",
            RIGMAT_VERSION);
    if (o->source != NULL) {
        fputs(" * source: ", cf);
        for (k = 0; o->source[k] != '\0'; k++)
            fputc(o->source[k] == '*' && o->source[k + 1] == '/' ? '?' :
                  ((unsigned char)o->source[k] < 0x20 ? '?' : o->source[k]), cf);
        fputc('\n', cf);
    }
    fprintf(cf, " * C99; from libm only sin, cos and sqrt%s; no allocation, no recursion.\n"
                " * The evaluator of the mechanism is written once for any scalar type and\n"
                " * appears twice below: with %s (f, h) and with dual numbers (value,\n"
                " * tangent), which give the Jacobians exactly, one direction at a time.\n"
                " * Caution: the model and its filters hold near the operating point they\n"
                " * were made at; try them on the rig with current limits, an emergency stop\n"
                " * within reach and the machine restrained, and defer to local codes and\n"
                " * licensed practice.\n */\n",
            fl ? " (float forms: sinf, cosf, sqrtf)" : "", fl ? "float" : "double");
    fprintf(cf, "#include \"%s.h\"\n\n#include <math.h>\n\n", low);
    fputs("/* the sizes of the model's layout (FW_NX ...) and of the evaluator's\n"
          " * canonical order (FW_CNX ...; ...1: at least 1, for arrays), and of its\n"
          " * table (FW_MAX_...) */\n", cf);
    fprintf(cf, "#define FW_R %s_real\n#define FW_API(name) %s_##name\n"
                "#define FW_DATA(name) %s_##name\n",
            low, low, low);
    fprintf(cf, "#define FW_NX %zu\n#define FW_NU %zu\n#define FW_NC %zu\n#define FW_NY %zu\n"
                "#define FW_NU1 %zu\n#define FW_NY1 %zu\n#define FW_CNX %zu\n#define FW_CNU1 %zu\n#define FW_CNY1 %zu\n",
            L->nx, L->nu, L->nu_control, L->ny, MAX1(L->nu), MAX1(L->ny), C->nx, MAX1(C->nu), MAX1(C->ny));
    fprintf(cf, "#define FW_CNU %zu\n#define FW_CNY %zu\n", C->nu, C->ny);
    fprintf(cf, "#define FW_HAS_FILTERS %d\n#define FW_HAS_CROSS %d\n", filters, cross != NULL);
    if (filters)
        fprintf(cf, "#define FW_SUBSTEPS %s_EKF_SUBSTEPS\n", up);
    fprintf(cf, "#define FW_SQRT sqrt%s\n", fl ? "f" : "");
    fprintf(cf, "#define FW_MAX_NB %d\n#define FW_MAX_NJ %d\n#define FW_MAX_N %d\n"
                "#define FW_MAX_NM %d\n#define FW_MAX_NL %d\n#define FW_MAX_NFO %d\n"
                "#define FW_MAX_NS %d\n#define FW_MAX_NX %d\n#define FW_MAX_NU %d\n"
                "#define FW_MAX_NY %d\n",
            MAX1(t->nb), MAX1(t->nj), MAX1(t->n), MAX1(t->nm), MAX1(t->nl), MAX1(t->nfo),
            MAX1(t->ns), MAX1(t->nx), MAX1(t->nu), MAX1(t->ny));
    pass_macros(cf, 0, fl);
    put_lines(cf, rigmat_fw_kernel_text);
    undef_pass(cf);
    pass_macros(cf, 1, fl);
    put_lines(cf, rigmat_fw_kernel_text);
    undef_pass(cf);
    write_table(&out, t);
    fputs("\n/* layout -> canonical (the evaluator's order) */\n", cf);
    fputs("static const int fw_xmap[FW_NX] = { ", cf);
    for (k = 0; k < L->nx; k++)
        fprintf(cf, "%s%zu", k ? ", " : "", rigmat_system_state_canon(sys, k));
    fprintf(cf, " };\nstatic const int fw_umap[%s] = { ", "FW_NU1");
    for (k = 0; k < MAX1(L->nu); k++)
        fprintf(cf, "%s%zu", k ? ", " : "", L->nu > 0 ? rigmat_system_input_canon(sys, k) : 0);
    fprintf(cf, " };\nstatic const int fw_ymap[%s] = { ", "FW_NY1");
    for (k = 0; k < MAX1(L->ny); k++)
        fprintf(cf, "%s%zu", k ? ", " : "", L->ny > 0 ? ymap[k] : 0);
    fputs(" };\n/* the canonical state at the operating point (states the layout leaves\n"
          " * out keep these values) */\nstatic const FW_R fw_xbase[FW_CNX] = { ", cf);
    for (k = 0; k < C->nx; k++) {
        if (k)
            fputs(", ", cf);
        num(&out, xc[k]);
    }
    fputs(" };\n", cf);
    if (cross != NULL)
        fputs("#define fw_kf_cross FW_DATA(kalman_cross)\n", cf);
    fputc('\n', cf);
    put_lines(cf, rigmat_fw_filter_text);
    if (out.beyond != 0.0)
        st = RIGMAT_FAIL(err, RIGMAT_ENUMERIC,
                "a value of the model (%g) does not fit in a %s: the table of %s.c cannot hold it",
                out.beyond, fl ? "float" : "double", low);
done:
    free(tail);
    rigmat_result_free(r);
    if (cross != NULL)
        gsl_matrix_free(cross);
    free(t);
    free(w);
    free(xc);
    free(uc);
    free(scratch);
    free(ymap);
    rigmat_system_free(sys);
    return st;
}
