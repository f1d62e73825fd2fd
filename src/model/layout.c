/* layout.c - names, units, kinds and order of the state, input and output
 * vectors (see layout.h).  Whether a coordinate a `states` list leaves out
 * is cyclic needs the equations of motion: that check belongs to the mech
 * stage (src/mech/equations.c, rigmat_model_check_equations). */
#include "layout.h"
#include "kinds.h"

#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

void rigmat_layout_release(rigmat_layout *l)
{
    size_t i;

    if (l == NULL)
        return;
    for (i = 0; i < l->nx; i++)
        free(l->states[i].name);
    for (i = 0; i < l->nu; i++)
        free(l->inputs[i].name);
    for (i = 0; i < l->ny; i++)
        free(l->outputs[i].name);
    free(l->states);
    free(l->inputs);
    free(l->outputs);
    memset(l, 0, sizeof *l);
}

static int has_coordinate(const rigmat_joint *j)
{
    return rigmat_joint_kind(j->type)->has_coordinate;
}

/* a dependent coordinate of a closed loop is solved from the closures: it
 * has neither a coordinate nor a rate state (README.md, "Closed loops") */
static int has_coord_state(const rigmat_joint *j)
{
    return has_coordinate(j) && j->driven != RIGMAT_DRIVEN_POSITION && !j->dependent;
}

static int has_rate_state(const rigmat_joint *j)
{
    return has_coordinate(j) && !j->dependent &&
            (j->driven == RIGMAT_DRIVEN_NONE || j->driven == RIGMAT_DRIVEN_ACCELERATION);
}

static int has_current_state(const rigmat_motor *mo)
{
    return rigmat_drive_kind_desc(mo->drive)->has_current_state && !mo->inductance_neglected;
}

static rigmat_status add_sig(rigmat_signal *arr, size_t *count, const char *name,
        const char *suffix, const char *unit, rigmat_signal_kind kind, size_t index,
        rigmat_role role, rigmat_error *err)
{
    rigmat_signal *s = &arr[*count];
    const size_t len = strlen(name) + (suffix ? strlen(suffix) : 0) + 1;

    s->name = malloc(len);
    if (s->name == NULL)
        return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
    snprintf(s->name, len, "%s%s", name, suffix ? suffix : "");
    snprintf(s->unit, sizeof s->unit, "%s", unit);
    s->kind = kind;
    s->index = index;
    s->role = role;
    (*count)++;
    return RIGMAT_OK;
}

/* An input's limits from its model entry (README.md, "Limits"). */
static void fill_limits(const rigmat_model *m, rigmat_signal *in)
{
    const double *lim = NULL;

    in->has_limit = 0;
    in->limit[0] = in->limit[1] = 0.0;
    in->current_limit = 0.0;
    if (in->kind == RIGMAT_SIG_MOTOR) {
        const rigmat_motor *mo = &m->motors[in->index];
        lim = mo->has_limit ? mo->limit : NULL;
        in->current_limit = mo->current_limit_a;
    } else if (in->kind == RIGMAT_SIG_FORCE && m->forces[in->index].has_limit) {
        lim = m->forces[in->index].limit;
    } else if (in->kind == RIGMAT_SIG_DRIVEN && m->joints[in->index].has_limit) {
        lim = m->joints[in->index].limit;
    }
    if (lim != NULL) {
        in->has_limit = 1;
        in->limit[0] = lim[0];
        in->limit[1] = lim[1];
    }
}

static int shaped(const rigmat_model *m, const rigmat_signal *in)
{
    if (in->role != RIGMAT_ROLE_DISTURBANCE)
        return 0;
    if (in->kind == RIGMAT_SIG_FORCE)
        return m->forces[in->index].bandwidth_hz > 0.0;
    if (in->kind == RIGMAT_SIG_DRIVEN)
        return m->joints[in->index].bandwidth_hz > 0.0;
    return 0;
}

static rigmat_status canonical(const rigmat_model *m, rigmat_layout *l, int interleaved,
        rigmat_error *err)
{
    rigmat_status st = RIGMAT_OK;
    size_t j, k, g;
    const size_t maxx = 2 * m->njoints + m->nmotors + m->njoints + m->nforces +
            2 * m->nsensors;
    const size_t maxu = m->njoints + m->nmotors + m->nforces + 2 * m->nsensors;
    char unit[sizeof l->states[0].unit];

    memset(l, 0, sizeof *l);
    l->states = calloc(maxx ? maxx : 1, sizeof *l->states);
    l->inputs = calloc(maxu ? maxu : 1, sizeof *l->inputs);
    l->outputs = calloc(m->nsensors ? m->nsensors : 1, sizeof *l->outputs);
    if (l->states == NULL || l->inputs == NULL || l->outputs == NULL) {
        st = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
        goto fail;
    }
    /* inputs: control then disturbances; driven joints, motors, forces */
    for (g = 0; g < 2 && st == RIGMAT_OK; g++) {
        const rigmat_role role = g == 0 ? RIGMAT_ROLE_INPUT : RIGMAT_ROLE_DISTURBANCE;
        for (j = 0; j < m->njoints && st == RIGMAT_OK; j++) {
            const rigmat_joint *jt = &m->joints[j];
            if (has_coordinate(jt) && jt->driven != RIGMAT_DRIVEN_NONE && jt->role == role)
                st = add_sig(l->inputs, &l->nu, jt->name, NULL,
                        rigmat_units_kind_symbol(rigmat_joint_driven_kind(jt)),
                        RIGMAT_SIG_DRIVEN, j, role, err);
        }
        for (k = 0; k < m->nmotors && st == RIGMAT_OK && role == RIGMAT_ROLE_INPUT; k++)
            st = add_sig(l->inputs, &l->nu, m->motors[k].name, NULL,
                    rigmat_units_kind_symbol(rigmat_drive_kind_desc(m->motors[k].drive)->input),
                    RIGMAT_SIG_MOTOR, k, role, err);
        for (k = 0; k < m->nforces && st == RIGMAT_OK; k++)
            if (m->forces[k].role == role)
                st = add_sig(l->inputs, &l->nu, m->forces[k].name, NULL,
                        rigmat_units_kind_symbol(rigmat_force_effort(m, &m->forces[k])),
                        RIGMAT_SIG_FORCE, k, role, err);
        if (g == 0)
            l->nu_control = l->nu;
    }
    /* a filtered sensor's density: white noise before its filter */
    for (k = 0; k < m->nsensors && st == RIGMAT_OK; k++)
        if (m->sensors[k].filter_hz > 0.0 && m->sensors[k].density > 0.0)
            st = add_sig(l->inputs, &l->nu, m->sensors[k].name, ".noise",
                    rigmat_sensor_measured_unit(m, &m->sensors[k]), RIGMAT_SIG_FILTER_NOISE, k,
                    RIGMAT_ROLE_DISTURBANCE, err);
    /* the white noise driving each sensor bias: a disturbance, last */
    for (k = 0; k < m->nsensors && st == RIGMAT_OK; k++)
        if (RIGMAT_SENSOR_HAS_BIAS(&m->sensors[k])) {
            rigmat_dim d = rigmat_units_dim(rigmat_sensor_measured_kind(m, &m->sensors[k]));
            d.half[RIGMAT_DIM_TIME] = (signed char)(d.half[RIGMAT_DIM_TIME] - 2);
            rigmat_units_format_dim(d, unit, sizeof unit);
            st = add_sig(l->inputs, &l->nu, m->sensors[k].name, ".bias_noise", unit,
                    RIGMAT_SIG_BIAS_NOISE, k, RIGMAT_ROLE_DISTURBANCE, err);
        }
    for (k = 0; k < l->nu && st == RIGMAT_OK; k++)
        fill_limits(m, &l->inputs[k]);
    /* states */
    for (j = 0; j < m->njoints && st == RIGMAT_OK; j++) {
        const rigmat_joint *jt = &m->joints[j];
        const rigmat_joint_desc *jd = rigmat_joint_kind(jt->type);
        if (has_coord_state(jt))
            st = add_sig(l->states, &l->nx, jt->name, jd->suffix[0], rigmat_joint_unit(jt, 0),
                    RIGMAT_SIG_COORD, j, RIGMAT_ROLE_INPUT, err);
        if (interleaved && st == RIGMAT_OK && has_rate_state(jt))
            st = add_sig(l->states, &l->nx, jt->name, jd->suffix[1], rigmat_joint_unit(jt, 1),
                    RIGMAT_SIG_RATE, j, RIGMAT_ROLE_INPUT, err);
    }
    for (j = 0; j < m->njoints && st == RIGMAT_OK && !interleaved; j++) {
        const rigmat_joint *jt = &m->joints[j];
        if (has_rate_state(jt))
            st = add_sig(l->states, &l->nx, jt->name, rigmat_joint_kind(jt->type)->suffix[1],
                    rigmat_joint_unit(jt, 1), RIGMAT_SIG_RATE, j, RIGMAT_ROLE_INPUT, err);
    }
    for (k = 0; k < m->nmotors && st == RIGMAT_OK; k++)
        if (has_current_state(&m->motors[k]))
            st = add_sig(l->states, &l->nx, m->motors[k].name, ".current", "A",
                    RIGMAT_SIG_CURRENT, k, RIGMAT_ROLE_INPUT, err);
    for (k = 0; k < l->nu && st == RIGMAT_OK; k++)
        if (shaped(m, &l->inputs[k]))
            st = add_sig(l->states, &l->nx, l->inputs[k].name, ".shaped", l->inputs[k].unit,
                    RIGMAT_SIG_SHAPING, k, RIGMAT_ROLE_DISTURBANCE, err);
    /* sensor filters, then sensor biases last (before any delay states
     * discretize adds) */
    for (k = 0; k < m->nsensors && st == RIGMAT_OK; k++)
        if (m->sensors[k].filter_hz > 0.0)
            st = add_sig(l->states, &l->nx, m->sensors[k].name, ".filtered",
                    rigmat_sensor_measured_unit(m, &m->sensors[k]), RIGMAT_SIG_FILTERED, k,
                    RIGMAT_ROLE_INPUT, err);
    for (k = 0; k < m->nsensors && st == RIGMAT_OK; k++)
        if (RIGMAT_SENSOR_HAS_BIAS(&m->sensors[k]))
            st = add_sig(l->states, &l->nx, m->sensors[k].name, ".bias",
                    rigmat_sensor_measured_unit(m, &m->sensors[k]), RIGMAT_SIG_BIAS, k,
                    RIGMAT_ROLE_DISTURBANCE, err);
    for (k = 0; k < m->nsensors && st == RIGMAT_OK; k++)
        st = add_sig(l->outputs, &l->ny, m->sensors[k].name, NULL,
                rigmat_sensor_output_unit(m, &m->sensors[k]), RIGMAT_SIG_SENSOR, k,
                RIGMAT_ROLE_INPUT, err);
    if (st != RIGMAT_OK)
        goto fail;
    rigmat_layout_hash(l);
    return RIGMAT_OK;
fail:
    rigmat_layout_release(l);
    return st;
}

rigmat_status rigmat_layout_canonical(const rigmat_model *m, rigmat_layout *l, rigmat_error *err)
{
    return canonical(m, l, 0, err);
}

static uint64_t fnv_bytes(uint64_t h, const char *s, size_t n)
{
    size_t i;
    for (i = 0; i < n; i++) {
        h ^= (unsigned char)s[i];
        h *= UINT64_C(0x100000001b3);
    }
    return h;
}

static uint64_t fnv_signals(uint64_t h, const rigmat_signal *s, size_t n)
{
    size_t i;
    for (i = 0; i < n; i++) {
        h = fnv_bytes(h, s[i].name, strlen(s[i].name));
        h = fnv_bytes(h, "\t", 1);
        h = fnv_bytes(h, s[i].unit, strlen(s[i].unit));
        h = fnv_bytes(h, "\n", 1);
    }
    return h;
}

void rigmat_layout_hash(rigmat_layout *l)
{
    uint64_t h = UINT64_C(0xcbf29ce484222325);

    h = fnv_signals(h, l->states, l->nx);
    h = fnv_bytes(h, "|", 1);
    h = fnv_signals(h, l->inputs, l->nu);
    h = fnv_bytes(h, "|", 1);
    h = fnv_signals(h, l->outputs, l->ny);
    snprintf(l->order_hash, sizeof l->order_hash, "%016llx", (unsigned long long)h);
}

/* ------------------------------------------------------------- lists */

static rigmat_loc list_loc(const rigmat_namelist *nl, size_t i)
{
    rigmat_loc none = { NULL, 0, 0 };
    if (nl->locs == NULL || nl->count == 0)
        return none;
    return nl->locs[i < nl->count ? i : 0];
}

static rigmat_status diag(rigmat_diags *d, rigmat_loc where, const char *hint, const char *what,
        const char *name)
{
    rigmat_loc none = { NULL, 0, 0 };
    if (d == NULL)
        return RIGMAT_EMODEL;
    if (rigmat_diags_add(d, RIGMAT_ERROR, where, none, NULL, hint, "%s '%s'", what, name) !=
            RIGMAT_OK)
        return RIGMAT_ENOMEM;
    return RIGMAT_EMODEL;
}

/* Reorder sig[0..n) by the names in nl.  used[i] says canonical entry i was
 * listed; pos[i] its new place.  Unknown and repeated names are errors;
 * missing ones are left to the caller (allow_missing) or errors. */
static rigmat_status reorder(rigmat_signal *sig, size_t *n, const rigmat_namelist *nl,
        const char *group, int allow_missing, size_t *pos, int *missing_out, rigmat_diags *d)
{
    rigmat_status st = RIGMAT_OK, s2;
    rigmat_signal *tmp;
    size_t i, k, kept = 0;
    char what[64];

    for (i = 0; i < *n; i++)
        pos[i] = RIGMAT_NONE;
    for (k = 0; k < nl->count; k++) {
        for (i = 0; i < *n; i++)
            if (strcmp(sig[i].name, nl->names[k]) == 0)
                break;
        if (i == *n) {
            snprintf(what, sizeof what, "the %s list names no %s", group,
                    group[0] == 's' ? "state" : group[0] == 'i' ? "input" : "output");
            st = diag(d, list_loc(nl, k), "names are listed by 'rigmat check'", what,
                    nl->names[k]);
            if (st == RIGMAT_ENOMEM)
                return st;
            continue;
        }
        if (pos[i] != RIGMAT_NONE) {
            snprintf(what, sizeof what, "the %s list repeats", group);
            st = diag(d, list_loc(nl, k), NULL, what, nl->names[k]);
            if (st == RIGMAT_ENOMEM)
                return st;
            continue;
        }
        pos[i] = kept++;
    }
    for (i = 0; i < *n; i++) {
        missing_out[i] = pos[i] == RIGMAT_NONE;
        if (missing_out[i] && !allow_missing) {
            snprintf(what, sizeof what, "the %s list leaves out", group);
            s2 = diag(d, list_loc(nl, 0), "list every one exactly once", what, sig[i].name);
            if (s2 == RIGMAT_ENOMEM)
                return s2;
            st = s2;
        }
    }
    if (st != RIGMAT_OK)
        return st;
    tmp = calloc(*n ? *n : 1, sizeof *tmp);
    if (tmp == NULL)
        return RIGMAT_ENOMEM;
    for (i = 0; i < *n; i++)
        if (pos[i] != RIGMAT_NONE)
            tmp[pos[i]] = sig[i];
        else
            free(sig[i].name);
    memcpy(sig, tmp, kept * sizeof *tmp);
    free(tmp);
    *n = kept;
    return RIGMAT_OK;
}

static rigmat_status error_to_diag(rigmat_diags *d, const rigmat_error *e)
{
    if (d == NULL)
        return e->status;
    if (rigmat_diags_add(d, RIGMAT_ERROR, e->where, e->within, NULL,
                e->hint[0] ? e->hint : NULL, "%s", e->message) != RIGMAT_OK)
        return RIGMAT_ENOMEM;
    return e->status == RIGMAT_ENOMEM ? RIGMAT_ENOMEM : RIGMAT_EMODEL;
}

rigmat_status rigmat_layout_build(rigmat_model *m, rigmat_diags *d)
{
    rigmat_layout l;
    rigmat_error e;
    rigmat_status st;
    size_t *pos = NULL, i, k;
    int *missing = NULL;
    size_t *shape_in = NULL;

    memset(&e, 0, sizeof e);
    rigmat_layout_release(&m->layout);
    st = canonical(m, &l, m->order_interleaved, &e);
    if (st != RIGMAT_OK)
        return error_to_diag(d, &e);
    k = l.nx > l.nu ? l.nx : l.nu;
    k = k > l.ny ? k : l.ny;
    pos = calloc(k + 1, sizeof *pos);
    missing = calloc(k + 1, sizeof *missing);
    shape_in = calloc(l.nx + 1, sizeof *shape_in);
    if (pos == NULL || missing == NULL || shape_in == NULL) {
        st = RIGMAT_ENOMEM;
        goto done;
    }
    /* shaping states name their input by index: remember the canonical one */
    for (i = 0; i < l.nx; i++)
        shape_in[i] = l.states[i].index;
    if (m->order_inputs.count > 0) {
        rigmat_signal *before = calloc(l.nu + 1, sizeof *before);
        if (before == NULL) {
            st = RIGMAT_ENOMEM;
            goto done;
        }
        st = reorder(l.inputs, &l.nu, &m->order_inputs, "inputs", 0, pos, missing, d);
        for (i = 0; i < l.nx && st == RIGMAT_OK; i++)
            if (l.states[i].kind == RIGMAT_SIG_SHAPING)
                l.states[i].index = pos[shape_in[i]];
        /* control inputs must stay ahead of disturbances for nu_control */
        for (i = 0; i + 1 < l.nu && st == RIGMAT_OK; i++)
            if (l.inputs[i].role == RIGMAT_ROLE_DISTURBANCE &&
                    l.inputs[i + 1].role == RIGMAT_ROLE_INPUT)
                st = diag(d, list_loc(&m->order_inputs, i + 1),
                        "control inputs come first, then disturbances",
                        "the inputs list puts a control input after a disturbance:",
                        l.inputs[i + 1].name);
        free(before);
        if (st != RIGMAT_OK)
            goto done;
    }
    if (m->order_states.count > 0) {
        /* only a coordinate may be left out; whether it is cyclic needs the
         * equations: rigmat_model_check_equations (mech stage) tests it */
        for (i = 0; i < l.nx; i++)
            missing[i] = 1;
        for (k = 0; k < m->order_states.count; k++)
            for (i = 0; i < l.nx; i++)
                if (strcmp(l.states[i].name, m->order_states.names[k]) == 0)
                    missing[i] = 0;
        st = RIGMAT_OK;
        for (i = 0; i < l.nx && st == RIGMAT_OK; i++)
            if (missing[i] && l.states[i].kind != RIGMAT_SIG_COORD)
                st = diag(d, list_loc(&m->order_states, 0),
                        "only a cyclic coordinate may be left out",
                        "the states list leaves out", l.states[i].name);
        if (st == RIGMAT_OK)
            st = reorder(l.states, &l.nx, &m->order_states, "states", 1, pos, missing, d);
        if (st != RIGMAT_OK)
            goto done;
    }
    if (m->order_outputs.count > 0) {
        st = reorder(l.outputs, &l.ny, &m->order_outputs, "outputs", 0, pos, missing, d);
        if (st != RIGMAT_OK)
            goto done;
    }
    rigmat_layout_hash(&l);
    m->layout = l;
    memset(&l, 0, sizeof l);
done:
    rigmat_layout_release(&l);
    free(pos);
    free(missing);
    free(shape_in);
    return st;
}
