/* load.c - schema 1 (README.md, "The model file"): the tree from load_yaml.c,
 * after parts and --set overrides, read into a rigmat_model.
 *
 * Every field declares its kind (a rigmat_kind for numbers with units, a
 * body/joint/motor reference, a word from a fixed list, a name list) and is
 * read through one helper per kind, so every value gets the same checks:
 * the YAML type, NaN/Inf, the unit's dimension, the range.  An error is
 * recorded with the offending key or value and its entry, and reading goes
 * on (up to opt->max_errors), so one run reports all it can.
 *
 * Decisions beyond the README's description of the schema, made here:
 *   - names match [A-Za-z_][A-Za-z0-9_-]*; each section's names are unique;
 *     joints, motors, forces and sensors are also unique among each other,
 *     because they name states, inputs and outputs ("tilt.angle", "drive",
 *     "gyro") and operating-point entries.  Bodies, springs and dampers
 *     have namespaces of their own: a body may share its hinge's name, as
 *     a body `hub` on a slider `hub` does in examples/quarter-car.yaml;
 *   - `mass` is required (write `mass: 0` for a massless link): a
 *     forgotten mass would otherwise pass as a massless body;
 *   - a rod's centre of mass is its middle; `com` together with `rod` is an
 *     error (give `inertia` and `com` for anything else);
 *   - a spring's stiffness may be negative (a destabilizing magnet); a
 *     damper's coefficient may not (it would create energy);
 *   - `friction` may be given in either motor form; in datasheet form it
 *     replaces the friction derived from the no-load figures;
 *   - `supply` is accepted only with `drive: duty`;
 *   - operating point and `solve`: a bare joint name is its coordinate,
 *     `<joint>.rate`/`<joint>.velocity` its rate, `<joint>.angle`/
 *     `<joint>.position` the coordinate again; inputs by their names.
 */
#include "load.h"
#include "units.h"
#include "kinds.h"
#include "reentrant.h"

#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* C99 has no M_PI; the digits are those of any libm header */
#ifndef M_PI
#define M_PI 3.14159265358979323846
#endif

static const rigmat_loc no_loc = { NULL, 0, 0 };

struct ld {
    rigmat_model *m;
    rigmat_diags *d;
    const rigmat_options *opt;
    int nomem;
    int lost_child; /* a joint's child did not resolve: "not attached" would mislead */
    /* per joint: its type (UNKNOWN_TYPE) or its driven word (UNKNOWN_DRIVEN)
     * was not understood and has been reported; what depends on it is not
     * checked again, so one mistake gives one error */
    unsigned char *joint_unknown;
};

enum { UNKNOWN_TYPE = 1, UNKNOWN_DRIVEN = 2 };

static int joint_unknown(const struct ld *L, size_t j)
{
    return L->joint_unknown != NULL && j != RIGMAT_NONE && (L->joint_unknown[j] & UNKNOWN_TYPE);
}

/* Whether the joint's `driven:` (and so its inputs) is unknown. */
static int driven_unknown(const struct ld *L, size_t j)
{
    return L->joint_unknown != NULL && j != RIGMAT_NONE && L->joint_unknown[j] != 0;
}

/* The entry being read: "body 'chassis'" and its mapping. */
struct ent {
    const char *name;
    rigmat_loc loc;
    char words[160];
    const rigmat_node *map;
};

/* ------------------------------------------------------------ messages */

static void lerr(struct ld *L, const struct ent *e, rigmat_loc where, const char *hint,
        const char *fmt, ...) RIGMAT_PRINTF(5, 6);
static void lerr(struct ld *L, const struct ent *e, rigmat_loc where, const char *hint,
        const char *fmt, ...)
{
    char buf[256];
    va_list ap;
    const int same = e != NULL && e->loc.line == where.line && e->loc.col == where.col;

    va_start(ap, fmt);
    vsnprintf(buf, sizeof buf, fmt, ap);
    va_end(ap);
    if (rigmat_diags_add(L->d, RIGMAT_ERROR, where, (e && !same) ? e->loc : no_loc,
                (e && !same) ? e->words : NULL, hint, "%s", buf) != RIGMAT_OK)
        L->nomem = 1;
}

static void lwarn(struct ld *L, const struct ent *e, rigmat_loc where, const char *hint,
        const char *fmt, ...) RIGMAT_PRINTF(5, 6);
static void lwarn(struct ld *L, const struct ent *e, rigmat_loc where, const char *hint,
        const char *fmt, ...)
{
    char buf[256];
    va_list ap;

    va_start(ap, fmt);
    vsnprintf(buf, sizeof buf, fmt, ap);
    va_end(ap);
    if (rigmat_diags_add(L->d, RIGMAT_WARNING, where, e ? e->loc : no_loc, e ? e->words : NULL,
                hint, "%s", buf) != RIGMAT_OK)
        L->nomem = 1;
}

/* The nearest of n words to s, or NULL when none is close enough to be a
 * likely typo (distance at most 2, or a third of the word). */
static const char *nearest(const char *s, const char *const *words, size_t n)
{
    const char *best = NULL;
    size_t bestd = (size_t)-1, i;

    for (i = 0; i < n; i++) {
        const size_t d = rigmat_load_distance(s, words[i], 8);
        const size_t len = strlen(words[i]);
        const size_t limit = len / 3 > 2 ? len / 3 : 2;
        if (d <= limit && d < bestd) {
            bestd = d;
            best = words[i];
        }
    }
    return best;
}

/* "did you mean 'x'?", or "use one of: a, b, c" when nothing is close. */
static void hint_for(char *hint, size_t len, const char *s, const char *const *words, size_t n)
{
    const char *near = nearest(s, words, n);
    size_t used, i;

    if (near != NULL) {
        snprintf(hint, len, "did you mean '%s'?", near);
        return;
    }
    used = (size_t)snprintf(hint, len, "%s", n ? "use one of: " : "");
    for (i = 0; i < n && used + strlen(words[i]) + 6 < len; i++)
        used += (size_t)snprintf(hint + used, len - used, "%s%s", i ? ", " : "", words[i]);
    if (i < n && used + 5 < len)
        snprintf(hint + used, len - used, ", ...");
}

static char *dup_s(struct ld *L, const char *s)
{
    const size_t n = strlen(s) + 1;
    char *p = malloc(n);

    if (p == NULL) {
        L->nomem = 1;
        return NULL;
    }
    memcpy(p, s, n);
    return p;
}

/* ------------------------------------------------------------- fields */

static const rigmat_entry *field(const struct ent *e, const char *key)
{
    return rigmat_node_get(e->map, key);
}

/* Unknown keys, with the nearest valid key as hint.  `other` lists keys
 * that are valid elsewhere in this kind of entry but not in this form. */
static void check_keys(struct ld *L, const struct ent *e, const char *const *keys, size_t n,
        const char *const *other, size_t nother, const char *form)
{
    size_t i, k;
    char hint[160];

    for (i = 0; i < e->map->n; i++) {
        const rigmat_entry *f = &e->map->entries[i];
        int ok = 0;
        for (k = 0; k < n && !ok; k++)
            ok = strcmp(f->key, keys[k]) == 0;
        if (ok)
            continue;
        for (k = 0; k < nother && !ok; k++)
            ok = strcmp(f->key, other[k]) == 0;
        if (ok) {
            lerr(L, e, f->key_loc, NULL, "'%s' does not apply to %s", f->key, form);
            continue;
        }
        hint_for(hint, sizeof hint, f->key, keys, n);
        lerr(L, e, f->key_loc, hint, "unknown key '%s'", f->key);
    }
}

static int is_null(const rigmat_node *n)
{
    return n->type == RIGMAT_NODE_SCALAR && n->plain &&
            (n->text[0] == '\0' || strcmp(n->text, "~") == 0 || strcmp(n->text, "null") == 0);
}

static int want_scalar(struct ld *L, const struct ent *e, const rigmat_node *n, const char *what)
{
    if (n->type == RIGMAT_NODE_SCALAR && !is_null(n))
        return 1;
    lerr(L, e, n->loc, NULL, "expected %s, got %s", what,
            is_null(n) ? "nothing" : rigmat_node_type_words(n->type));
    return 0;
}

static void kind_label(char *buf, size_t len, rigmat_kind kind, int density)
{
    if (density)
        snprintf(buf, len, "%s per sqrt(Hz) (%s/sqrt(Hz))", rigmat_units_kind_words(kind),
                rigmat_units_kind_symbol(kind));
    else if (kind == RIGMAT_Q_NUMBER)
        snprintf(buf, len, "a number");
    else
        snprintf(buf, len, "%s (%s)", rigmat_units_kind_words(kind),
                rigmat_units_kind_symbol(kind));
}

/* A number with a unit of the given kind (or kind/sqrt(Hz)). */
static int num_node(struct ld *L, const struct ent *e, const rigmat_node *n, rigmat_kind kind,
        int density, double *out)
{
    char what[96];
    rigmat_error err;
    char *end;
    double lead;
    rigmat_status st;

    /* the label only for the message: a formatted string per number was
     * a tenth of a sweep's setting of its values */
    if (!(n->type == RIGMAT_NODE_SCALAR && !is_null(n))) {
        kind_label(what, sizeof what, kind, density);
        return want_scalar(L, e, n, what);
    }
    lead = rigmat_strtod_c(n->text, &end);
    if (end != n->text && !isfinite(lead)) {
        lerr(L, e, n->loc, "write a finite number", "'%s' is not a finite number", n->text);
        return 0;
    }
    memset(&err, 0, sizeof err);
    st = density ? rigmat_units_expect_density(n->text, kind, out, &err)
                 : rigmat_units_expect(n->text, kind, out, &err);
    if (st == RIGMAT_ENOMEM) {
        L->nomem = 1;
        return 0;
    }
    if (st != RIGMAT_OK) {
        lerr(L, e, n->loc, err.hint[0] ? err.hint : NULL, "%s", err.message);
        return 0;
    }
    if (!isfinite(*out)) {
        lerr(L, e, n->loc, NULL, "'%s' is out of range", n->text);
        return 0;
    }
    if (density && !isfinite(*out * *out)) {
        /* the intensity is the density squared (README.md, "Noise convention") */
        lerr(L, e, n->loc, "a noise density is at most about 1e154 in SI units",
                "'%s' is out of range: its noise intensity (the square) overflows", n->text);
        return 0;
    }
    return 1;
}

/* A per-sample noise or resolution enters as its square (a variance):
 * refuse one whose square overflows, as a model error. */
static void must_square_finite(struct ld *L, const struct ent *e, const char *key, double v)
{
    const rigmat_entry *f = field(e, key);

    if (f != NULL && isfinite(v) && !isfinite(v * v))
        lerr(L, e, f->value->loc, "a noise is at most about 1e154 in SI units",
                "'%s' is out of range: its variance (the square) overflows", f->value->text != NULL ?
                f->value->text : key);
}

/* Optional number: 1 read, 0 absent, -1 error. */
static int opt_num(struct ld *L, const struct ent *e, const char *key, rigmat_kind kind,
        double *out)
{
    const rigmat_entry *f = field(e, key);

    if (f == NULL)
        return 0;
    return num_node(L, e, f->value, kind, 0, out) ? 1 : -1;
}

static int opt_density(struct ld *L, const struct ent *e, const char *key, rigmat_kind kind,
        double *out)
{
    const rigmat_entry *f = field(e, key);

    if (f == NULL)
        return 0;
    return num_node(L, e, f->value, kind, 1, out) ? 1 : -1;
}

static void missing(struct ld *L, const struct ent *e, const char *key, const char *hint)
{
    size_t i;

    /* a misspelt key ("mas") was reported with this key as its hint;
     * "missing 'mass'" on top would only repeat it */
    for (i = 0; e->map != NULL && i < e->map->n; i++)
        if (rigmat_load_distance(e->map->entries[i].key, key, 3) <= 2)
            return;
    lerr(L, e, e->loc, hint, "missing required field '%s'", key);
}

static int req_num(struct ld *L, const struct ent *e, const char *key, rigmat_kind kind,
        double *out, const char *hint)
{
    const int r = opt_num(L, e, key, kind, out);

    if (r == 0)
        missing(L, e, key, hint);
    return r == 1;
}

/* Range checks on a field read as a number. */
static void must_positive(struct ld *L, const struct ent *e, const char *key, double v)
{
    const rigmat_entry *f = field(e, key);
    if (f != NULL && !(v > 0.0))
        lerr(L, e, f->value->loc, NULL, "'%s' must be positive, got %s", key, f->value->text);
}

static void must_nonneg(struct ld *L, const struct ent *e, const char *key, double v)
{
    const rigmat_entry *f = field(e, key);
    if (f != NULL && v < 0.0)
        lerr(L, e, f->value->loc, NULL, "'%s' must not be negative, got %s", key,
                f->value->text);
}

/* [x, y] of a kind. */
static int vec2_node(struct ld *L, const struct ent *e, const rigmat_node *n, rigmat_kind kind,
        double out[2])
{
    char what[96];
    int ok;

    if (n->type != RIGMAT_NODE_SEQ || n->n != 2) {
        kind_label(what, sizeof what, kind, 0);
        if (n->type == RIGMAT_NODE_SEQ)
            lerr(L, e, n->loc, "write [x, y]", "expected a list of 2 values, got %zu", n->n);
        else
            lerr(L, e, n->loc, "write [x, y]", "expected a list [x, y] of %s, got %s", what,
                    rigmat_node_type_words(n->type));
        return 0;
    }
    ok = num_node(L, e, n->items[0], kind, 0, &out[0]);
    ok = num_node(L, e, n->items[1], kind, 0, &out[1]) && ok;
    return ok;
}

static int opt_vec2(struct ld *L, const struct ent *e, const char *key, rigmat_kind kind,
        double out[2])
{
    const rigmat_entry *f = field(e, key);

    if (f == NULL)
        return 0;
    return vec2_node(L, e, f->value, kind, out) ? 1 : -1;
}

/* `limit` of a control input (README.md, "Limits"): one value v > 0
 * means [-v, v]; a list [low, high] needs low < high.  A disturbance is not
 * commanded and takes none.  Returns 1 read, 0 absent, -1 error. */
static int read_limit(struct ld *L, const struct ent *e, rigmat_kind kind, rigmat_role role,
        int *has, double lim[2])
{
    const rigmat_entry *f = field(e, "limit");
    const rigmat_node *n;
    double v[2];

    if (f == NULL)
        return 0;
    n = f->value;
    if (role == RIGMAT_ROLE_DISTURBANCE) {
        lerr(L, e, f->key_loc, "remove it, or make the entry 'role: input'",
                "'limit' applies to control inputs, not to a disturbance");
        return -1;
    }
    if (n->type == RIGMAT_NODE_SEQ) {
        if (n->n != 2) {
            lerr(L, e, n->loc, "write [low, high], or one value v for [-v, v]",
                    "expected a list [low, high], got %zu values", n->n);
            return -1;
        }
        if (!num_node(L, e, n->items[0], kind, 0, &v[0]) ||
                !num_node(L, e, n->items[1], kind, 0, &v[1]))
            return -1;
        if (!(v[0] < v[1])) {
            lerr(L, e, n->loc, "write [low, high] with low below high",
                    "limit [%s, %s] holds no value", n->items[0]->text, n->items[1]->text);
            return -1;
        }
    } else {
        if (!num_node(L, e, n, kind, 0, &v[1]))
            return -1;
        if (!(v[1] > 0.0)) {
            lerr(L, e, n->loc, "one value v means [-v, v]; write [low, high] for a one-sided "
                    "limit", "limit must be positive, got %s", n->text);
            return -1;
        }
        v[0] = -v[1];
    }
    *has = 1;
    lim[0] = v[0];
    lim[1] = v[1];
    return 1;
}

/* A direction: [x, y] (normalised) or an angle from +x. */
static int dir_node(struct ld *L, const struct ent *e, const rigmat_node *n, double out[2])
{
    double v[2], a, len;

    if (n->type == RIGMAT_NODE_SEQ) {
        if (!vec2_node(L, e, n, RIGMAT_Q_NUMBER, v))
            return 0;
        len = hypot(v[0], v[1]);
        if (!(len > 0.0)) {
            lerr(L, e, n->loc, "give a non-zero vector, e.g. [1, 0], or an angle",
                    "a direction of length zero");
            return 0;
        }
        out[0] = v[0] / len;
        out[1] = v[1] / len;
        return 1;
    }
    if (n->type == RIGMAT_NODE_MAP) {
        lerr(L, e, n->loc, "write [x, y] or an angle such as 90 deg",
                "expected a direction, got a mapping");
        return 0;
    }
    if (!num_node(L, e, n, RIGMAT_Q_ANGLE, 0, &a))
        return 0;
    out[0] = cos(a);
    out[1] = sin(a);
    return 1;
}

/* A word from a list; returns its index or -1. */
static int word_node(struct ld *L, const struct ent *e, const rigmat_node *n,
        const char *const *words, size_t nw, const char *what)
{
    char hint[160];
    size_t i;

    if (!want_scalar(L, e, n, what))
        return -1;
    for (i = 0; i < nw; i++)
        if (strcmp(n->text, words[i]) == 0)
            return (int)i;
    hint_for(hint, sizeof hint, n->text, words, nw);
    lerr(L, e, n->loc, hint, "'%s' is not %s", n->text, what);
    return -1;
}

static int opt_word(struct ld *L, const struct ent *e, const char *key, const char *const *words,
        size_t nw, const char *what, int dflt)
{
    const rigmat_entry *f = field(e, key);

    if (f == NULL)
        return dflt;
    return word_node(L, e, f->value, words, nw, what);
}

#define NW(a) (sizeof(a) / sizeof(a)[0])

static void read_axis(struct ld *L, const struct ent *e, const rigmat_node *n, double out[2]);

static void check_range(struct ld *L, const struct ent *e, const rigmat_key_spec *k, double v)
{
    if (k->range == RIGMAT_RANGE_POSITIVE)
        must_positive(L, e, k->key, v);
    else if (k->range == RIGMAT_RANGE_NONNEG)
        must_nonneg(L, e, k->key, v);
}

/* Read the keys one kind adds (its table entry in kinds.c) into obj, in
 * table order, each by its type, unit kind and range. */
static void read_spec_keys(struct ld *L, const struct ent *e, const rigmat_key_spec *keys,
        size_t n, void *obj)
{
    size_t i;

    for (i = 0; i < n; i++) {
        const rigmat_key_spec *k = &keys[i];
        char *at = (char *)obj + k->offset;
        const rigmat_entry *f = field(e, k->key);
        switch (k->type) {
        case RIGMAT_KEY_NUMBER:
            if (k->required ? req_num(L, e, k->key, k->kind, (double *)(void *)at, k->hint)
                            : opt_num(L, e, k->key, k->kind, (double *)(void *)at) == 1)
                check_range(L, e, k, *(double *)(void *)at);
            break;
        case RIGMAT_KEY_POINT:
            if (opt_vec2(L, e, k->key, k->kind, (double *)(void *)at) == 0 && k->required)
                missing(L, e, k->key, k->hint);
            break;
        case RIGMAT_KEY_DIRECTION:
        case RIGMAT_KEY_AXIS:
            if (f == NULL && k->required)
                missing(L, e, k->key, k->hint);
            else if (f != NULL && k->type == RIGMAT_KEY_DIRECTION)
                dir_node(L, e, f->value, (double *)(void *)at);
            else if (f != NULL)
                read_axis(L, e, f->value, (double *)(void *)at);
            break;
        case RIGMAT_KEY_WORD: {
            const int w = opt_word(L, e, k->key, k->words, k->nwords, k->what, 0);
            *(int *)(void *)at = w > 0;
            if (w > 0 && k->needs != NULL && field(e, k->needs) == NULL) {
                char hint[64];
                snprintf(hint, sizeof hint, "add %s", k->needs);
                lerr(L, e, f->value->loc, hint, "'%s: %s' needs '%s'", k->key, k->words[w],
                        k->needs);
            }
            break;
        }
        }
    }
}

/* -------------------------------------------------------- references */

static size_t find_body(const rigmat_model *m, const char *s)
{
    size_t i;
    for (i = 0; i < m->nbodies; i++)
        if (m->bodies[i].name != NULL && strcmp(m->bodies[i].name, s) == 0)
            return i;
    return RIGMAT_NONE;
}

static size_t find_joint(const rigmat_model *m, const char *s)
{
    size_t i;
    for (i = 0; i < m->njoints; i++)
        if (m->joints[i].name != NULL && strcmp(m->joints[i].name, s) == 0)
            return i;
    return RIGMAT_NONE;
}

static size_t find_motor(const rigmat_model *m, const char *s)
{
    size_t i;
    for (i = 0; i < m->nmotors; i++)
        if (m->motors[i].name != NULL && strcmp(m->motors[i].name, s) == 0)
            return i;
    return RIGMAT_NONE;
}

static size_t find_force(const rigmat_model *m, const char *s)
{
    size_t i;
    for (i = 0; i < m->nforces; i++)
        if (m->forces[i].name != NULL && strcmp(m->forces[i].name, s) == 0)
            return i;
    return RIGMAT_NONE;
}

/* A hint naming the nearest of up to 64 candidate names. */
static void name_hint(char *hint, size_t len, const char *s, const char *const *names, size_t n)
{
    const char *near = nearest(s, names, n);

    if (near != NULL)
        snprintf(hint, len, "did you mean '%s'?", near);
    else if (n == 0)
        snprintf(hint, len, "there is none in this model");
    else
        hint_for(hint, len, s, names, n);
}

static size_t collect_names(const char **names, size_t max, const void *base, size_t count,
        size_t stride, size_t first)
{
    size_t i, n = 0;
    for (i = first; i < count && n < max; i++) {
        const char *nm = *(char *const *)((const char *)base + i * stride);
        if (nm != NULL)
            names[n++] = nm;
    }
    return n;
}

static size_t body_ref(struct ld *L, const struct ent *e, const rigmat_node *n)
{
    const char *names[64];
    char hint[160];
    size_t b, k;

    if (!want_scalar(L, e, n, "a body name"))
        return RIGMAT_NONE;
    b = find_body(L->m, n->text);
    if (b != RIGMAT_NONE)
        return b;
    k = collect_names(names, 64, L->m->bodies, L->m->nbodies, sizeof(rigmat_body), 0);
    name_hint(hint, sizeof hint, n->text, names, k);
    lerr(L, e, n->loc, hint, "unknown body '%s'", n->text);
    return RIGMAT_NONE;
}

static size_t joint_ref(struct ld *L, const struct ent *e, const rigmat_node *n)
{
    const char *names[64];
    char hint[160];
    size_t j, k;

    if (!want_scalar(L, e, n, "a joint name"))
        return RIGMAT_NONE;
    j = find_joint(L->m, n->text);
    if (j != RIGMAT_NONE)
        return j;
    k = collect_names(names, 64, L->m->joints, L->m->njoints, sizeof(rigmat_joint), 0);
    name_hint(hint, sizeof hint, n->text, names, k);
    lerr(L, e, n->loc, hint, "unknown joint '%s'", n->text);
    return RIGMAT_NONE;
}

static size_t motor_ref(struct ld *L, const struct ent *e, const rigmat_node *n)
{
    const char *names[64];
    char hint[160];
    size_t j, k;

    if (!want_scalar(L, e, n, "a motor name"))
        return RIGMAT_NONE;
    j = find_motor(L->m, n->text);
    if (j != RIGMAT_NONE)
        return j;
    k = collect_names(names, 64, L->m->motors, L->m->nmotors, sizeof(rigmat_motor), 0);
    name_hint(hint, sizeof hint, n->text, names, k);
    lerr(L, e, n->loc, hint, "unknown motor '%s'", n->text);
    return RIGMAT_NONE;
}

/* ----------------------------------------------------------- sections */

static int valid_name(const char *s)
{
    if (!((*s >= 'a' && *s <= 'z') || (*s >= 'A' && *s <= 'Z') || *s == '_'))
        return 0;
    for (s++; *s; s++)
        if (!((*s >= 'a' && *s <= 'z') || (*s >= 'A' && *s <= 'Z') || (*s >= '0' && *s <= '9') ||
                    *s == '_' || *s == '-'))
            return 0;
    return 1;
}

/* The entry count of section `key` (a mapping) against max_entries, and
 * for joints max_joints: 1 within them, 0 with the error reported at the
 * first entry past the limit. */
static int count_within(struct ld *L, const rigmat_node *sec, const char *key)
{
    if (sec->n > L->opt->max_entries) {
        lerr(L, NULL, sec->entries[L->opt->max_entries].key_loc,
                "a mechanism needs far fewer; split the model, or raise max_entries if this "
                "one is real (README.md, Limits)",
                "more than %zu entries in '%s'", L->opt->max_entries, key);
        return 0;
    }
    if (strcmp(key, "joints") == 0 && sec->n > L->opt->max_joints) {
        lerr(L, NULL, sec->entries[L->opt->max_joints].key_loc,
                "linearizing costs grow as the square of the joint count; a model this "
                "large would take minutes, so it is refused (README.md, limits)",
                "more than %zu joints: at most %zu, so that every command finishes within "
                "seconds", L->opt->max_joints, L->opt->max_joints);
        return 0;
    }
    return 1;
}

/* The sections whose entries are counted (and may name catalog parts). */
static const char *const entry_sections[] = { "bodies", "joints", "springs", "dampers",
    "motors", "forces", "sensors" };

rigmat_status rigmat_load_counts(const rigmat_node *root, const rigmat_options *opt,
        rigmat_diags *d)
{
    struct ld L;
    size_t s;
    int ok = 1;

    memset(&L, 0, sizeof L);
    L.d = d;
    L.opt = opt;
    if (root == NULL || root->type != RIGMAT_NODE_MAP)
        return RIGMAT_OK;
    for (s = 0; s < sizeof entry_sections / sizeof entry_sections[0]; s++) {
        const rigmat_entry *sec = rigmat_node_get(root, entry_sections[s]);
        if (sec != NULL && sec->value->type == RIGMAT_NODE_MAP &&
                !count_within(&L, sec->value, entry_sections[s]))
            ok = 0;
    }
    if (L.nomem)
        return RIGMAT_ENOMEM;
    return ok ? RIGMAT_OK : RIGMAT_EMODEL;
}

/* The entries of a section: a mapping of name: mapping.  Returns the
 * section node (NULL when absent, empty or wrong). */
static const rigmat_node *section(struct ld *L, const rigmat_node *root, const char *key)
{
    const rigmat_entry *s = rigmat_node_get(root, key);

    if (s == NULL || is_null(s->value))
        return NULL;
    if (s->value->type != RIGMAT_NODE_MAP) {
        lerr(L, NULL, s->value->loc, "write one entry per line: 'name: {key: value, ...}'",
                "expected a mapping of names to entries, got %s",
                rigmat_node_type_words(s->value->type));
        return NULL;
    }
    if (!count_within(L, s->value, key))
        return NULL;
    return s->value;
}

/* Set up e for entry i of a section; 0 if it cannot be read at all.
 * Reports bad names and a value that is not a mapping. */
static int entry(struct ld *L, const rigmat_node *sec, size_t i, const char *what, struct ent *e)
{
    const rigmat_entry *en = &sec->entries[i];
    size_t k;

    e->name = en->key;
    e->loc = en->key_loc;
    e->map = en->value;
    snprintf(e->words, sizeof e->words, "%s '%s'", what, en->key);
    for (k = 0; k < i; k++)
        if (strcmp(sec->entries[k].key, en->key) == 0)
            return 0; /* a duplicate key, reported by the YAML reader */
    if (!valid_name(en->key)) {
        lerr(L, NULL, en->key_loc,
                "a name starts with a letter or '_' and holds letters, digits, '_' and '-'",
                "invalid name '%s'", en->key);
        return 0;
    }
    if (en->value->type != RIGMAT_NODE_MAP) {
        lerr(L, e, en->value->loc, "write the fields as a mapping: {key: value, ...}",
                "expected a mapping of the %s's fields, got %s", what,
                is_null(en->value) ? "nothing" : rigmat_node_type_words(en->value->type));
        return 0;
    }
    return 1;
}

/* Joints, motors, forces and sensors name signals: unique among each other. */
static int signal_name_taken(struct ld *L, const struct ent *e)
{
    const rigmat_model *m = L->m;
    const char *kind = NULL;
    size_t i;

    for (i = 0; i < m->njoints && !kind; i++)
        if (m->joints[i].name && strcmp(m->joints[i].name, e->name) == 0)
            kind = "joint";
    for (i = 0; i < m->nmotors && !kind; i++)
        if (m->motors[i].name && strcmp(m->motors[i].name, e->name) == 0)
            kind = "motor";
    for (i = 0; i < m->nforces && !kind; i++)
        if (m->forces[i].name && strcmp(m->forces[i].name, e->name) == 0)
            kind = "force";
    for (i = 0; i < m->nsensors && !kind; i++)
        if (m->sensors[i].name && strcmp(m->sensors[i].name, e->name) == 0)
            kind = "sensor";
    if (kind == NULL)
        return 0;
    lerr(L, NULL, e->loc,
            "joints, motors, forces and sensors name states, inputs and outputs, so their "
            "names must differ", "duplicate name '%s': already a %s", e->name, kind);
    return 1;
}

static void *alloc_array(struct ld *L, size_t n, size_t size)
{
    void *p = calloc(n ? n : 1, size);
    if (p == NULL)
        L->nomem = 1;
    return p;
}

/* --------------------------------------------------------------- bodies */

static const char *const body_keys[] = { "mass", "inertia", "shape", "com", "part" };

static void read_shape(struct ld *L, const struct ent *e, const rigmat_node *n, rigmat_body *b)
{
    const rigmat_node *args = NULL;
    const rigmat_shape_desc *sd;
    const char *shape_words[RIGMAT_NSHAPES];
    const size_t nshapes = rigmat_shape_words(shape_words, RIGMAT_NSHAPES);
    const char *word;
    struct ent sub;
    int k;

    if (n->type == RIGMAT_NODE_SCALAR) {
        k = word_node(L, e, n, shape_words, nshapes, "a shape");
        if (k < 0)
            return;
        if (rigmat_shape_kinds[k + 1].nkeys > 0) {
            lerr(L, e, n->loc, "write e.g. shape: {disc: {radius: 61 mm}}",
                    "shape '%s' needs its dimensions", n->text);
            return;
        }
        b->shape = (rigmat_shape)(k + 1);
        return;
    }
    if (n->type != RIGMAT_NODE_MAP || n->n != 1) {
        lerr(L, e, n->loc, "write e.g. shape: {disc: {radius: 61 mm}}",
                "expected a shape: a mapping with one of point, rod, disc, ring, sphere, box");
        return;
    }
    word = n->entries[0].key;
    for (k = 0; k < (int)nshapes; k++)
        if (strcmp(word, shape_words[k]) == 0)
            break;
    if (k == (int)nshapes) {
        char hint[160];
        hint_for(hint, sizeof hint, word, shape_words, nshapes);
        lerr(L, e, n->entries[0].key_loc, hint, "unknown shape '%s'", word);
        return;
    }
    args = n->entries[0].value;
    /* the shapes a file names follow "given" in the table */
    b->shape = (rigmat_shape)(k + 1);
    sd = rigmat_shape_kind_desc(b->shape);
    if (sd->nkeys == 0)
        return;
    if (args->type != RIGMAT_NODE_MAP) {
        lerr(L, e, args->loc, "write e.g. {radius: 61 mm}",
                "expected the %s's dimensions as a mapping, got %s", word,
                rigmat_node_type_words(args->type));
        b->shape = RIGMAT_SHAPE_GIVEN;
        return;
    }
    sub = *e;
    sub.map = args;
    {
        const char *keys[8];
        size_t i;
        for (i = 0; i < sd->nkeys && i < NW(keys); i++)
            keys[i] = sd->keys[i].key;
        check_keys(L, &sub, keys, i, NULL, 0, sd->keys_form);
    }
    /* a rod points along +y unless told otherwise */
    b->direction_rad = M_PI / 2.0;
    read_spec_keys(L, &sub, sd->keys, sd->nkeys, b);
}

static void read_bodies(struct ld *L, const rigmat_node *root)
{
    const rigmat_node *sec = section(L, root, "bodies");
    const size_t n = sec ? sec->n : 0;
    rigmat_model *m = L->m;
    size_t i;

    m->bodies = alloc_array(L, n + 1, sizeof *m->bodies);
    if (m->bodies == NULL)
        return;
    m->nbodies = 1;
    m->bodies[0].name = dup_s(L, "ground");
    m->bodies[0].joint = RIGMAT_NONE;
    for (i = 0; i < n; i++) {
        rigmat_body *b = &m->bodies[m->nbodies];
        const rigmat_entry *f;
        struct ent e;
        if (!entry(L, sec, i, "body", &e))
            continue;
        if (strcmp(e.name, "ground") == 0) {
            lerr(L, NULL, e.loc, "name the body differently; joints use 'ground' as parent",
                    "'ground' is the fixed world body and may not be defined");
            continue;
        }
        m->nbodies++;
        b->name = dup_s(L, e.name);
        b->loc = e.loc;
        b->joint = RIGMAT_NONE;
        if (e.map->broken)
            continue;
        check_keys(L, &e, body_keys, NW(body_keys), NULL, 0, "a body");
        if (req_num(L, &e, "mass", RIGMAT_Q_MASS, &b->mass_kg, "write 'mass: 0' for a "
                    "massless link"))
            must_nonneg(L, &e, "mass", b->mass_kg);
        if (opt_num(L, &e, "inertia", RIGMAT_Q_INERTIA, &b->inertia_kgm2) == 1)
            must_nonneg(L, &e, "inertia", b->inertia_kgm2);
        f = field(&e, "shape");
        if (f != NULL) {
            if (field(&e, "inertia") != NULL)
                lerr(L, &e, f->key_loc, "give either 'inertia' or 'shape', not both",
                        "'shape' and 'inertia' together");
            else
                read_shape(L, &e, f->value, b);
        }
        f = field(&e, "com");
        if (f != NULL && rigmat_shape_kind_desc(b->shape)->centre != NULL)
            lerr(L, &e, f->key_loc, rigmat_shape_kind_desc(b->shape)->com_hint,
                    "'com' and a %s shape together", rigmat_shape_kind_desc(b->shape)->word);
        else if (f != NULL)
            vec2_node(L, &e, f->value, RIGMAT_Q_LENGTH, b->com_m);
        if (rigmat_shape_kind_desc(b->shape)->centre != NULL)
            rigmat_shape_kind_desc(b->shape)->centre(b);
        b->inertia_kgm2 = rigmat_shape_kind_desc(b->shape)->inertia(b, b->mass_kg);
    }
}

/* --------------------------------------------------------------- joints */

static const char *const driven_words[] = { "none", "position", "velocity", "acceleration" };
static const char *const role_words[] = { "input", "disturbance" };

/* Units of a joint's coordinate and its derivatives (order 0, 1, 2). */
static rigmat_kind joint_kind(const rigmat_joint *j, int order)
{
    return rigmat_joint_kind(j->type)->q[order];
}

static int joint_moves(const rigmat_joint *j)
{
    return rigmat_joint_kind(j->type)->has_coordinate;
}

static void read_joints(struct ld *L, const rigmat_node *root)
{
    const rigmat_node *sec = section(L, root, "joints");
    const size_t n = sec ? sec->n : 0;
    rigmat_model *m = L->m;
    size_t i;

    m->joints = alloc_array(L, n, sizeof *m->joints);
    L->joint_unknown = alloc_array(L, n, 1);
    if (m->joints == NULL || L->joint_unknown == NULL)
        return;
    for (i = 0; i < n; i++) {
        rigmat_joint *j = &m->joints[m->njoints];
        const rigmat_entry *f;
        const rigmat_joint_desc *jd;
        const char *keys[24], *joint_types[RIGMAT_NJOINT_TYPES];
        const size_t ntypes = rigmat_joint_words(joint_types, RIGMAT_NJOINT_TYPES);
        size_t nk = 0, k;
        struct ent e;
        int t;
        if (!entry(L, sec, i, "joint", &e) || signal_name_taken(L, &e))
            continue;
        m->njoints++;
        j->name = dup_s(L, e.name);
        j->loc = e.loc;
        j->parent = j->child = RIGMAT_NONE;
        j->axis[0] = 1.0;
        if (e.map->broken) {
            L->lost_child = 1;
            continue;
        }
        f = field(&e, "type");
        t = -1;
        if (f == NULL)
            missing(L, &e, "type", "one of slider, hinge, rolling, fixed");
        else
            t = word_node(L, &e, f->value, joint_types, ntypes, "a joint type");
        if (t < 0) {
            check_keys(L, &e, rigmat_joint_all_keys, rigmat_joint_nall_keys, NULL, 0,
                    "a joint");
            /* nothing more is known about this joint: its type-specific
             * keys, its uses elsewhere and its operating point are not
             * checked (one mistake, one error) */
            j->type = RIGMAT_JOINT_FIXED;
            L->joint_unknown[m->njoints - 1] = UNKNOWN_TYPE | UNKNOWN_DRIVEN;
            f = NULL;
        } else {
            j->type = rigmat_joint_kinds[t].type;
        }
        jd = rigmat_joint_kind(j->type);
        for (k = 0; k < rigmat_joint_ncommon_keys; k++)
            keys[nk++] = rigmat_joint_common_keys[k];
        for (k = 0; k < jd->nkeys; k++)
            keys[nk++] = jd->keys[k].key;
        if (jd->drivable) {
            keys[nk++] = "driven";
            if (field(&e, "driven") != NULL)
                for (k = 0; k < rigmat_joint_ndriven_keys; k++)
                    keys[nk++] = rigmat_joint_driven_keys[k];
        }
        if (f != NULL) {
            char form[64];
            snprintf(form, sizeof form, "a %s joint", jd->word);
            check_keys(L, &e, keys, nk, rigmat_joint_all_keys, rigmat_joint_nall_keys, form);
        }
        f = field(&e, "parent");
        if (f == NULL)
            missing(L, &e, "parent", "the body this joint is attached to, or ground");
        else
            j->parent = body_ref(L, &e, f->value);
        f = field(&e, "child");
        if (f == NULL) {
            missing(L, &e, "child", "the body this joint carries");
        } else {
            j->child = body_ref(L, &e, f->value);
            if (j->child == RIGMAT_NONE)
                L->lost_child = 1;
            if (j->child == 0) {
                lerr(L, &e, f->value->loc, "ground is fixed; swap parent and child",
                        "a joint's child cannot be ground");
                j->child = RIGMAT_NONE;
            } else if (j->child != RIGMAT_NONE && j->child == j->parent) {
                lerr(L, &e, f->value->loc, NULL, "a joint's child cannot be its parent");
                j->child = RIGMAT_NONE;
            }
        }
        f = field(&e, "at");
        if (f != NULL && f->value->type == RIGMAT_NODE_SCALAR &&
                strcmp(f->value->text, "end") == 0) {
            /* the far end of a rod parent (README.md, "A rod hinged at its end") */
            if (j->parent != RIGMAT_NONE && m->bodies[j->parent].shape == RIGMAT_SHAPE_ROD) {
                const rigmat_body *pb = &m->bodies[j->parent];
                j->at_m[0] = pb->length_m * cos(pb->direction_rad);
                j->at_m[1] = pb->length_m * sin(pb->direction_rad);
            } else if (j->parent != RIGMAT_NONE)
                lerr(L, &e, f->value->loc, "give the parent a shape {rod: {length, "
                        "direction}}, or write the point: at: [x, y]", "'at: end' needs a rod "
                        "parent, and '%s' is not a rod", m->bodies[j->parent].name);
        } else
            opt_vec2(L, &e, "at", RIGMAT_Q_LENGTH, j->at_m);
        opt_num(L, &e, "angle", RIGMAT_Q_ANGLE, &j->angle_rad);
        read_spec_keys(L, &e, jd->keys, jd->nkeys, j);
        if (jd->drivable) {
            int dv = opt_word(L, &e, "driven", driven_words + 1, NW(driven_words) - 1,
                    "a driven derivative (position, velocity or acceleration)", -1);
            j->driven = dv < 0 ? RIGMAT_DRIVEN_NONE : (rigmat_driven)(dv + 1);
            if (dv < 0 && field(&e, "driven") != NULL)
                L->joint_unknown[m->njoints - 1] |= UNKNOWN_DRIVEN;
            if (j->driven != RIGMAT_DRIVEN_NONE) {
                const int r = opt_word(L, &e, "role", role_words, NW(role_words),
                        "a role (input or disturbance)", 0);
                j->role = r == 1 ? RIGMAT_ROLE_DISTURBANCE : RIGMAT_ROLE_INPUT;
                if (opt_density(L, &e, "density", joint_kind(j, (int)j->driven - 1),
                            &j->density) == 1)
                    must_nonneg(L, &e, "density", j->density);
                if (opt_num(L, &e, "bandwidth", RIGMAT_Q_FREQUENCY, &j->bandwidth_hz) == 1)
                    must_positive(L, &e, "bandwidth", j->bandwidth_hz);
                (void)read_limit(L, &e, joint_kind(j, (int)j->driven - 1), j->role,
                        &j->has_limit, j->limit);
            }
        }
    }
}

/* Each body the child of exactly one joint, every chain reaching ground. */
static void check_tree(struct ld *L)
{
    rigmat_model *m = L->m;
    unsigned char *state;
    size_t i, j;

    for (j = 0; j < m->njoints; j++) {
        const size_t c = m->joints[j].child;
        if (c == RIGMAT_NONE)
            continue;
        if (m->bodies[c].joint != RIGMAT_NONE) {
            struct ent e;
            e.name = m->joints[j].name;
            e.loc = m->joints[j].loc;
            e.map = NULL;
            snprintf(e.words, sizeof e.words, "joint '%s'", m->joints[j].name);
            lerr(L, &e, e.loc, "a body hangs from exactly one joint (use 'fixed' to weld "
                    "bodies); to close a loop such as a four-bar, drop this joint and join the "
                    "two bodies with an entry of 'closures:' (README.md, \"Closed loops\")",
                    "body '%s' is already the child of joint '%s'", m->bodies[c].name,
                    m->joints[m->bodies[c].joint].name);
            continue;
        }
        m->bodies[c].joint = j;
    }
    for (i = 1; i < m->nbodies && !L->lost_child; i++)
        if (m->bodies[i].joint == RIGMAT_NONE) {
            char hint[160];
            snprintf(hint, sizeof hint, "add a joint with 'child: %s'", m->bodies[i].name);
            lerr(L, NULL, m->bodies[i].loc, hint,
                    "body '%s' is not attached to the tree: no joint has it as child",
                    m->bodies[i].name);
        }
    /* 0 unknown, 1 on the current path, 2 reaches ground */
    state = calloc(m->nbodies ? m->nbodies : 1, 1);
    if (state == NULL) {
        L->nomem = 1;
        return;
    }
    state[0] = 2;
    for (i = 1; i < m->nbodies; i++) {
        size_t b = i, steps = 0;
        if (m->bodies[i].joint == RIGMAT_NONE)
            state[i] = 2; /* reported above */
        while (state[b] == 0 && steps++ <= m->nbodies) {
            const size_t jj = m->bodies[b].joint;
            state[b] = 1;
            if (jj == RIGMAT_NONE || m->joints[jj].parent == RIGMAT_NONE)
                break;
            b = m->joints[jj].parent;
        }
        if (state[b] == 1 && m->bodies[b].joint != RIGMAT_NONE &&
                m->joints[m->bodies[b].joint].parent != RIGMAT_NONE) {
            const rigmat_joint *jt = &m->joints[m->bodies[b].joint];
            lerr(L, NULL, jt->loc, "every chain of parents must end at ground",
                    "joints form a loop: body '%s' never reaches ground", m->bodies[b].name);
        }
        /* mark the whole path as settled, one report per loop */
        b = i;
        steps = 0;
        while (state[b] == 1 && steps++ <= m->nbodies) {
            const size_t jj = m->bodies[b].joint;
            state[b] = 2;
            if (jj == RIGMAT_NONE || m->joints[jj].parent == RIGMAT_NONE)
                break;
            b = m->joints[jj].parent;
        }
    }
    free(state);
}

/* ------------------------------------------------------ springs, dampers */

static void read_links(struct ld *L, const rigmat_node *root, int springs)
{
    const char *key = springs ? "springs" : "dampers";
    const char *what = springs ? "spring" : "damper";
    const rigmat_node *sec = section(L, root, key);
    const size_t n = sec ? sec->n : 0;
    rigmat_model *m = L->m;
    rigmat_link *arr = alloc_array(L, n, sizeof *arr);
    size_t i, count = 0;

    if (arr == NULL)
        return;
    if (springs)
        m->springs = arr;
    else
        m->dampers = arr;
    for (i = 0; i < n; i++) {
        rigmat_link *lk = &arr[count];
        static const char *const spring_keys[] = { "across", "between", "from", "to",
            "stiffness", "rest", "part" };
        static const char *const damper_keys[] = { "across", "between", "from", "to",
            "coefficient", "part" };
        const rigmat_entry *fa, *fb, *ff, *ft, *f;
        /* the units of the values follow from the placement */
        rigmat_kind stiffness = RIGMAT_Q_LIN_STIFFNESS, damping = RIGMAT_Q_LIN_DAMPING;
        rigmat_kind value_q = RIGMAT_Q_LENGTH;
        int forms, placed = 0;
        struct ent e;
        if (!entry(L, sec, i, what, &e))
            continue;
        count++;
        lk->name = dup_s(L, e.name);
        lk->loc = e.loc;
        lk->joint = lk->body_a = lk->body_b = RIGMAT_NONE;
        if (e.map->broken)
            continue;
        if (springs)
            check_keys(L, &e, spring_keys, NW(spring_keys), NULL, 0, "a spring");
        else
            check_keys(L, &e, damper_keys, NW(damper_keys), NULL, 0, "a damper");
        fa = field(&e, "across");
        fb = field(&e, "between");
        ff = field(&e, "from");
        ft = field(&e, "to");
        forms = (fa != NULL) + (fb != NULL) + (ff != NULL || ft != NULL);
        if (forms == 0) {
            lerr(L, &e, e.loc, "use 'across: JOINT', 'between: [A, B]' or 'from: {A: [x, y]}' "
                    "with 'to: {B: [x, y]}'", "missing where the %s acts", what);
        } else if (forms > 1) {
            const rigmat_entry *second = fb ? (fa ? fb : (ff ? ff : ft)) : (ff ? ff : ft);
            lerr(L, &e, second->key_loc, "use exactly one of across, between, from/to",
                    "'%s' together with another placement", second->key);
        } else if (fa != NULL) {
            lk->attach = RIGMAT_ATTACH_ACROSS;
            lk->joint = joint_ref(L, &e, fa->value);
            placed = lk->joint != RIGMAT_NONE && !joint_unknown(L, lk->joint);
            if (placed) {
                const rigmat_joint *j = &m->joints[lk->joint];
                if (!joint_moves(j))
                    lerr(L, &e, fa->value->loc, NULL,
                            "joint '%s' is fixed: nothing moves across it", j->name);
                stiffness = rigmat_joint_kind(j->type)->stiffness;
                damping = rigmat_joint_kind(j->type)->damping;
                value_q = joint_kind(j, 0);
            }
        } else if (fb != NULL) {
            lk->attach = RIGMAT_ATTACH_BETWEEN;
            stiffness = RIGMAT_Q_ROT_STIFFNESS;
            damping = RIGMAT_Q_ROT_DAMPING;
            value_q = RIGMAT_Q_ANGLE;
            placed = 1;
            if (fb->value->type != RIGMAT_NODE_SEQ || fb->value->n != 2) {
                lerr(L, &e, fb->value->loc, "write between: [bodyA, bodyB]",
                        "expected a list of two body names");
            } else {
                lk->body_a = body_ref(L, &e, fb->value->items[0]);
                lk->body_b = body_ref(L, &e, fb->value->items[1]);
                if (lk->body_a != RIGMAT_NONE && lk->body_a == lk->body_b)
                    lerr(L, &e, fb->value->items[1]->loc, NULL,
                            "a %s between a body and itself does nothing", what);
            }
        } else {
            const rigmat_entry *pair[2];
            int k;
            pair[0] = ff;
            pair[1] = ft;
            lk->attach = RIGMAT_ATTACH_POINTS;
            placed = 1;
            for (k = 0; k < 2; k++) {
                const rigmat_node *v;
                if (pair[k] == NULL) {
                    missing(L, &e, k ? "to" : "from", "a point-to-point link needs 'from' and "
                            "'to'");
                    continue;
                }
                v = pair[k]->value;
                if (v->type != RIGMAT_NODE_MAP || v->n != 1) {
                    lerr(L, &e, v->loc, "write e.g. {chassis: [0, 0.2 m]}",
                            "expected one body with a point: {BODY: [x, y]}");
                    continue;
                }
                {
                    const char *names[64];
                    char hint[160];
                    size_t b = find_body(m, v->entries[0].key), nn;
                    if (b == RIGMAT_NONE) {
                        nn = collect_names(names, 64, m->bodies, m->nbodies,
                                sizeof(rigmat_body), 0);
                        name_hint(hint, sizeof hint, v->entries[0].key, names, nn);
                        lerr(L, &e, v->entries[0].key_loc, hint, "unknown body '%s'",
                                v->entries[0].key);
                    }
                    if (k == 0)
                        lk->body_a = b;
                    else
                        lk->body_b = b;
                    vec2_node(L, &e, v->entries[0].value, RIGMAT_Q_LENGTH,
                            k ? lk->point_b_m : lk->point_a_m);
                }
            }
        }
        if (!placed) {
            /* the units of the values follow from the placement */
        } else if (springs) {
            req_num(L, &e, "stiffness", stiffness, &lk->stiffness, NULL);
            f = field(&e, "rest");
            if (f == NULL && lk->attach == RIGMAT_ATTACH_POINTS && forms == 1)
                missing(L, &e, "rest", "a point-to-point spring needs its rest length");
            else if (f != NULL &&
                    num_node(L, &e, f->value, value_q, 0, &lk->rest) &&
                    lk->attach == RIGMAT_ATTACH_POINTS)
                must_nonneg(L, &e, "rest", lk->rest);
        } else {
            if (req_num(L, &e, "coefficient", damping, &lk->coefficient, NULL))
                must_nonneg(L, &e, "coefficient", lk->coefficient);
        }
    }
    if (springs)
        m->nsprings = count;
    else
        m->ndampers = count;
}

/* --------------------------------------------------------------- motors */

static const char *const motor_keys[] = { "resistance", "inductance", "torque_constant",
    "back_emf_constant", "rotor_inertia", "friction", "rated_voltage", "stall_torque",
    "stall_current", "no_load_speed", "no_load_current", "figures_at", "drive", "supply",
    "gear_ratio", "efficiency", "radius", "lead", "load_inertia", "across", "mounted_on",
    "stator", "rotor", "count", "polarity", "limit", "current_limit", "part" };

static const rigmat_entry *first_of(const struct ent *e, const char *const *keys, size_t n)
{
    const rigmat_entry *best = NULL;
    size_t i;
    /* the one written first in the file, for a stable message */
    for (i = 0; i < n; i++) {
        const rigmat_entry *f = field(e, keys[i]);
        if (f != NULL && (best == NULL || f < best))
            best = f;
    }
    return best;
}

/* Datasheet figures to circuit values at the motor shaft (common practice;
 * README.md, "Motors: gearbox, efficiency, count"): R = V/I_stall; output-shaft figures moved
 * to the motor (T_m = T_out/(N eta), w_m = N w_out); Kt = T_m/I_stall;
 * Ke = (V - R I_nl)/w_m; b = eta Kt I_nl/w_m, so that the no-load point is
 * a steady state of the model, whose efficiency acts on Kt i. */
static void motor_sheet_values(struct ld *L, const struct ent *e, rigmat_motor *mo)
{
    static const char *const at_words[] = { "motor", "output" };
    double t_m, w_m;
    int ok = 1, at;

    mo->datasheet = 1;
    /* a value that did not read (wrong unit, missing) is reported once:
     * its range is checked only when it read */
    if (req_num(L, e, "rated_voltage", RIGMAT_Q_VOLTAGE, &mo->rated_voltage_v, NULL))
        must_positive(L, e, "rated_voltage", mo->rated_voltage_v);
    else
        ok = 0;
    if (req_num(L, e, "stall_torque", RIGMAT_Q_TORQUE, &mo->stall_torque_nm, NULL))
        must_positive(L, e, "stall_torque", mo->stall_torque_nm);
    else
        ok = 0;
    if (req_num(L, e, "stall_current", RIGMAT_Q_CURRENT, &mo->stall_current_a, NULL))
        must_positive(L, e, "stall_current", mo->stall_current_a);
    else
        ok = 0;
    if (req_num(L, e, "no_load_speed", RIGMAT_Q_ANGULAR_RATE, &mo->no_load_speed_rad_s, NULL))
        must_positive(L, e, "no_load_speed", mo->no_load_speed_rad_s);
    else
        ok = 0;
    if (req_num(L, e, "no_load_current", RIGMAT_Q_CURRENT, &mo->no_load_current_a, NULL))
        must_nonneg(L, e, "no_load_current", mo->no_load_current_a);
    else
        ok = 0;
    at = opt_word(L, e, "figures_at", at_words, NW(at_words), "motor or output", -2);
    if (at == -2 && mo->gear_ratio != 1.0) {
        missing(L, e, "figures_at", "with a gearbox say whether the sheet gives motor-shaft "
                "or output-shaft figures: figures_at: motor | output");
        ok = 0;
    }
    if (at == -1)
        ok = 0;
    mo->figures_at_output = at == 1;
    if (!ok || !(mo->rated_voltage_v > 0) || !(mo->stall_torque_nm > 0) ||
            !(mo->stall_current_a > 0) || !(mo->no_load_speed_rad_s > 0) ||
            mo->no_load_current_a < 0)
        return;
    if (mo->no_load_current_a >= mo->stall_current_a) {
        lerr(L, e, field(e, "no_load_current")->value->loc, NULL,
                "the no-load current must be below the stall current");
        return;
    }
    t_m = mo->stall_torque_nm;
    w_m = mo->no_load_speed_rad_s;
    if (mo->figures_at_output) {
        t_m /= mo->gear_ratio * mo->efficiency;
        w_m *= mo->gear_ratio;
    }
    mo->resistance_ohm = mo->rated_voltage_v / mo->stall_current_a;
    mo->kt_from_sheet = t_m / mo->stall_current_a;
    mo->ke_from_sheet = (mo->rated_voltage_v - mo->resistance_ohm * mo->no_load_current_a) / w_m;
    mo->torque_constant_nm_a = mo->kt_from_sheet;
    mo->back_emf_v_s_rad = mo->ke_from_sheet;
    if (field(e, "friction") == NULL)
        mo->friction_nm_s_rad =
                mo->efficiency * mo->kt_from_sheet * mo->no_load_current_a / w_m;
    if (fabs(mo->kt_from_sheet - mo->ke_from_sheet) >
            0.05 * fmax(mo->kt_from_sheet, mo->ke_from_sheet))
        lwarn(L, NULL, e->loc, "the model uses Kt for torque and Ke for the back-EMF",
                "motor '%s': Kt from the sheet (%.4g N*m/A) and Ke (%.4g V*s/rad) differ by "
                "%.0f%%", e->name, mo->kt_from_sheet, mo->ke_from_sheet,
                100.0 * fabs(mo->kt_from_sheet - mo->ke_from_sheet) /
                        fmax(mo->kt_from_sheet, mo->ke_from_sheet));
}

static void read_motors(struct ld *L, const rigmat_node *root)
{
    const rigmat_node *sec = section(L, root, "motors");
    const size_t n = sec ? sec->n : 0;
    rigmat_model *m = L->m;
    size_t i;

    m->motors = alloc_array(L, n, sizeof *m->motors);
    if (m->motors == NULL)
        return;
    for (i = 0; i < n; i++) {
        static const char *const mounts[] = { "parent", "child" };
        const rigmat_motor_form_desc *circuit = &rigmat_motor_forms[RIGMAT_MOTOR_CIRCUIT];
        const rigmat_motor_form_desc *datasheet = &rigmat_motor_forms[RIGMAT_MOTOR_DATASHEET];
        const char *drives[RIGMAT_NMOTOR_DRIVES];
        const size_t ndrives = rigmat_drive_words(drives, RIGMAT_NMOTOR_DRIVES);
        rigmat_motor *mo = &m->motors[m->nmotors];
        const rigmat_entry *circ, *sheet, *f, *fa, *fs, *fr;
        struct ent e;
        int d;
        if (!entry(L, sec, i, "motor", &e) || signal_name_taken(L, &e))
            continue;
        m->nmotors++;
        mo->name = dup_s(L, e.name);
        mo->loc = e.loc;
        mo->joint = mo->stator = mo->rotor = RIGMAT_NONE;
        mo->gear_ratio = 1.0;
        mo->efficiency = 1.0;
        mo->count = 1;
        mo->polarity = 1;
        if (e.map->broken)
            continue;
        check_keys(L, &e, motor_keys, NW(motor_keys), NULL, 0, "a motor");
        f = field(&e, "part");
        if (f != NULL && f->value->type == RIGMAT_NODE_SCALAR)
            mo->part = dup_s(L, f->value->text);
        /* transmission first: the datasheet form needs it */
        if (opt_num(L, &e, "gear_ratio", RIGMAT_Q_NUMBER, &mo->gear_ratio) == 1 &&
                !(mo->gear_ratio > 0)) {
            must_positive(L, &e, "gear_ratio", mo->gear_ratio);
            mo->gear_ratio = 1.0;
        }
        if (opt_num(L, &e, "efficiency", RIGMAT_Q_NUMBER, &mo->efficiency) == 1) {
            f = field(&e, "efficiency");
            if (!(mo->efficiency > 0.0 && mo->efficiency <= 1.0)) {
                lerr(L, &e, f->value->loc, "a gearbox efficiency lies in (0, 1]",
                        "efficiency %s is out of range", f->value->text);
                mo->efficiency = 1.0;
            } else if (mo->efficiency < 0.5) {
                lwarn(L, &e, f->value->loc, "below 0.5 a gearbox is often self-locking when "
                        "back-driven", "efficiency %s: a back-driven linear model means little "
                        "here", f->value->text);
            }
        }
        circ = first_of(&e, circuit->keys, circuit->nkeys);
        sheet = first_of(&e, datasheet->keys, datasheet->nkeys);
        if (circ != NULL && sheet != NULL) {
            lerr(L, &e, (sheet > circ ? sheet : circ)->key_loc,
                    "give either the circuit form (resistance, torque_constant, ...) or the "
                    "datasheet form (rated_voltage, stall_torque, ...)",
                    "'%s' (circuit form) and '%s' (datasheet form) together", circ->key,
                    sheet->key);
        } else if (sheet != NULL) {
            motor_sheet_values(L, &e, mo);
        } else if (circ != NULL) {
            if (req_num(L, &e, "resistance", RIGMAT_Q_RESISTANCE, &mo->resistance_ohm, NULL))
                must_positive(L, &e, "resistance", mo->resistance_ohm);
            if (req_num(L, &e, "torque_constant", RIGMAT_Q_TORQUE_CONSTANT,
                        &mo->torque_constant_nm_a, NULL))
                must_positive(L, &e, "torque_constant", mo->torque_constant_nm_a);
            mo->back_emf_v_s_rad = mo->torque_constant_nm_a;
            if (opt_num(L, &e, "back_emf_constant", RIGMAT_Q_BACK_EMF, &mo->back_emf_v_s_rad) ==
                    1)
                must_positive(L, &e, "back_emf_constant", mo->back_emf_v_s_rad);
        } else {
            lerr(L, &e, e.loc, "circuit form: resistance, inductance, torque_constant, "
                    "rotor_inertia; or datasheet form: rated_voltage, stall_torque, ...",
                    "missing the motor's values");
        }
        f = field(&e, "inductance");
        if (f == NULL)
            missing(L, &e, "inductance", "a value, or 'neglect' for a current that follows the "
                    "voltage at once");
        else if (f->value->type == RIGMAT_NODE_SCALAR && strcmp(f->value->text, "neglect") == 0)
            mo->inductance_neglected = 1;
        else if (num_node(L, &e, f->value, RIGMAT_Q_INDUCTANCE, 0, &mo->inductance_h))
            must_positive(L, &e, "inductance", mo->inductance_h);
        if (req_num(L, &e, "rotor_inertia", RIGMAT_Q_INERTIA, &mo->rotor_inertia_kgm2,
                    "write 0 to leave it out"))
            must_nonneg(L, &e, "rotor_inertia", mo->rotor_inertia_kgm2);
        if (opt_num(L, &e, "friction", RIGMAT_Q_ROT_DAMPING, &mo->friction_nm_s_rad) == 1)
            must_nonneg(L, &e, "friction", mo->friction_nm_s_rad);
        d = opt_word(L, &e, "drive", drives, ndrives, "a drive (voltage, current or duty)", 0);
        mo->drive = rigmat_drive_kinds[d < 0 ? 0 : d].drive;
        f = field(&e, "supply");
        if (rigmat_drive_kind_desc(mo->drive)->needs_supply && f == NULL && d >= 0)
            lerr(L, &e, field(&e, "drive")->value->loc, "add 'supply: 24 V': duty 1 is the "
                    "full supply voltage", "duty drive needs 'supply'");
        else if (f != NULL && !rigmat_drive_kind_desc(mo->drive)->needs_supply && d >= 0)
            lerr(L, &e, f->key_loc, "'supply' scales a duty cycle; add 'drive: duty'",
                    "'supply' applies only to drive: duty");
        else if (f != NULL && num_node(L, &e, f->value, RIGMAT_Q_VOLTAGE, 0, &mo->supply_v))
            must_positive(L, &e, "supply", mo->supply_v);
        /* limits (README.md, "Limits"): a duty is always within
         * [-1, 1], and `limit` may only narrow that */
        if (rigmat_drive_kind_desc(mo->drive)->needs_supply) {
            mo->has_limit = 1;
            mo->limit[0] = -1.0;
            mo->limit[1] = 1.0;
        }
        {
            double lim[2];
            int has = 0;
            if (read_limit(L, &e, rigmat_drive_kind_desc(mo->drive)->input, RIGMAT_ROLE_INPUT,
                        &has, lim) == 1) {
                if (mo->has_limit && (lim[0] < -1.0 || lim[1] > 1.0))
                    lerr(L, &e, field(&e, "limit")->value->loc, "a duty is always within "
                            "[-1, 1]; 'limit' may only narrow it (raise 'supply' for more)",
                            "duty limit [%.6g, %.6g] is wider than [-1, 1]", lim[0], lim[1]);
                mo->has_limit = 1;
                mo->limit[0] = lim[0];
                mo->limit[1] = lim[1];
            }
        }
        if (opt_num(L, &e, "current_limit", RIGMAT_Q_CURRENT, &mo->current_limit_a) == 1)
            must_positive(L, &e, "current_limit", mo->current_limit_a);
        if (opt_num(L, &e, "load_inertia", RIGMAT_Q_INERTIA, &mo->load_inertia_kgm2) == 1)
            must_nonneg(L, &e, "load_inertia", mo->load_inertia_kgm2);
        f = field(&e, "count");
        if (f != NULL) {
            double c;
            if (num_node(L, &e, f->value, RIGMAT_Q_NUMBER, 0, &c)) {
                if (c < 1 || c > 1000 || c != floor(c))
                    lerr(L, &e, f->value->loc, "identical motors in parallel: 1, 2, ...",
                            "count must be a whole number from 1 to 1000, got %s",
                            f->value->text);
                else
                    mo->count = (unsigned)c;
            }
        }
        f = field(&e, "polarity");
        if (f != NULL) {
            double p;
            if (num_node(L, &e, f->value, RIGMAT_Q_NUMBER, 0, &p)) {
                if (p != 1.0 && p != -1.0)
                    lerr(L, &e, f->value->loc, "+1 keeps the leads, -1 swaps them",
                            "polarity must be +1 or -1, got %s", f->value->text);
                else
                    mo->polarity = p > 0 ? 1 : -1;
            }
        }
        /* placement */
        fa = field(&e, "across");
        fs = field(&e, "stator");
        fr = field(&e, "rotor");
        if (fa != NULL && (fs != NULL || fr != NULL)) {
            lerr(L, &e, (fs ? fs : fr)->key_loc, "place a motor either across a joint or by "
                    "stator and rotor bodies", "'across' together with '%s'",
                    fs ? "stator" : "rotor");
        } else if (fa != NULL) {
            const int mt = opt_word(L, &e, "mounted_on", mounts, NW(mounts), "parent or child", 0);
            mo->mounted_on_child = mt == 1;
            mo->joint = joint_ref(L, &e, fa->value);
            if (mo->joint != RIGMAT_NONE && !joint_unknown(L, mo->joint)) {
                const rigmat_joint *j = &m->joints[mo->joint];
                const rigmat_joint_desc *jd = rigmat_joint_kind(j->type);
                const rigmat_entry *frad = field(&e, "radius"), *flead = field(&e, "lead");
                if (!jd->has_coordinate) {
                    lerr(L, &e, fa->value->loc, NULL, "joint '%s' is fixed: a motor across it "
                            "cannot move anything", j->name);
                } else if (jd->motor_linear) {
                    if (frad != NULL && flead != NULL)
                        lerr(L, &e, flead->key_loc, "a pulley or pinion has a radius, a screw "
                                "a lead", "'radius' and 'lead' together");
                    else if (frad == NULL && flead == NULL)
                        lerr(L, &e, fa->value->loc, "give 'radius' (pulley, pinion, drum) or "
                                "'lead' (screw, length per turn)",
                                "a motor across slider '%s' needs 'radius' or 'lead'", j->name);
                    else if (frad != NULL && num_node(L, &e, frad->value, RIGMAT_Q_LENGTH, 0,
                                                     &mo->radius_m))
                        must_positive(L, &e, "radius", mo->radius_m);
                    else if (flead != NULL && num_node(L, &e, flead->value, RIGMAT_Q_LEAD, 0,
                                                      &mo->lead_m))
                        must_positive(L, &e, "lead", mo->lead_m);
                    mo->stator = mo->mounted_on_child ? j->child : j->parent;
                    mo->rotor = RIGMAT_NONE;
                } else {
                    mo->stator = mo->mounted_on_child ? j->child : j->parent;
                    mo->rotor = mo->mounted_on_child ? j->parent : j->child;
                }
                if (!jd->motor_linear && (frad != NULL || flead != NULL))
                    lerr(L, &e, (frad ? frad : flead)->key_loc, NULL,
                            "'%s' applies only to a motor across a slider", frad ? "radius" :
                            "lead");
            }
        } else if (fs != NULL || fr != NULL) {
            if (fs == NULL)
                missing(L, &e, "stator", "the body holding the motor's housing");
            else
                mo->stator = body_ref(L, &e, fs->value);
            if (fr == NULL)
                missing(L, &e, "rotor", "the body turned through the gearbox");
            else
                mo->rotor = body_ref(L, &e, fr->value);
            if (fs && fr && mo->stator != RIGMAT_NONE && mo->stator == mo->rotor)
                lerr(L, &e, fr->value->loc, NULL, "a motor's rotor and stator are the same "
                        "body");
            if (field(&e, "mounted_on") != NULL)
                lerr(L, &e, field(&e, "mounted_on")->key_loc, "the stator says where it is "
                        "mounted", "'mounted_on' applies only to a motor across a joint");
            if (field(&e, "radius") != NULL || field(&e, "lead") != NULL) {
                const rigmat_entry *x = field(&e, "radius") ? field(&e, "radius")
                                                            : field(&e, "lead");
                lerr(L, &e, x->key_loc, NULL, "'%s' applies only to a motor across a slider",
                        x->key);
            }
        } else {
            lerr(L, &e, e.loc, "add 'across: JOINT', or 'stator: BODY' and 'rotor: BODY'",
                    "missing where the motor sits");
        }
    }
}

/* --------------------------------------------------------------- forces */

static void read_forces(struct ld *L, const rigmat_node *root)
{
    const char *const *keys_all = rigmat_force_all_keys;
    const size_t nall = rigmat_force_nall_keys;
    const rigmat_node *sec = section(L, root, "forces");
    const size_t n = sec ? sec->n : 0;
    rigmat_model *m = L->m;
    size_t i;

    m->forces = alloc_array(L, n, sizeof *m->forces);
    if (m->forces == NULL)
        return;
    for (i = 0; i < n; i++) {
        rigmat_force *fo = &m->forces[m->nforces];
        const rigmat_entry *fon, *ftq, *fac, *f;
        const rigmat_force_desc *fd;
        struct ent e;
        int forms, r;
        if (!entry(L, sec, i, "force", &e) || signal_name_taken(L, &e))
            continue;
        m->nforces++;
        fo->name = dup_s(L, e.name);
        fo->loc = e.loc;
        fo->body = fo->reacting = fo->joint = RIGMAT_NONE;
        if (e.map->broken)
            continue;
        fon = field(&e, rigmat_force_kinds[RIGMAT_FORCE_POINT].word);
        ftq = field(&e, rigmat_force_kinds[RIGMAT_FORCE_TORQUE].word);
        fac = field(&e, rigmat_force_kinds[RIGMAT_FORCE_ACROSS].word);
        fd = rigmat_force_kind_desc(fon ? RIGMAT_FORCE_POINT : ftq ? RIGMAT_FORCE_TORQUE
                                                                   : RIGMAT_FORCE_ACROSS);
        forms = (fon != NULL) + (ftq != NULL) + (fac != NULL);
        if (forms != 1) {
            check_keys(L, &e, keys_all, nall, NULL, 0, "a force");
            if (forms == 0)
                lerr(L, &e, e.loc, "use 'on: BODY' with 'direction', 'torque_on: BODY' or "
                        "'across: JOINT'", "missing where the force acts");
            else
                lerr(L, &e, (fac ? fac : ftq)->key_loc, "use exactly one of on, torque_on, "
                        "across", "'%s' together with another placement",
                        (fac ? fac : ftq)->key);
        } else if (fon != NULL) {
            check_keys(L, &e, fd->keys, fd->nkeys, keys_all, nall, fd->form);
            fo->kind = fd->kind;
            fo->body = body_ref(L, &e, fon->value);
            opt_vec2(L, &e, "at", RIGMAT_Q_LENGTH, fo->at_m);
            f = field(&e, "direction");
            if (f == NULL)
                missing(L, &e, "direction", "[x, y] or an angle such as 90 deg");
            else
                dir_node(L, &e, f->value, fo->direction);
            {
                static const char *const frames[] = { "world", "body" };
                fo->frame_body = opt_word(L, &e, "frame", frames, NW(frames),
                        "a frame (world or body)", 0) == 1;
            }
        } else if (ftq != NULL) {
            check_keys(L, &e, fd->keys, fd->nkeys, keys_all, nall, fd->form);
            fo->kind = fd->kind;
            fo->body = body_ref(L, &e, ftq->value);
            f = field(&e, "reacting");
            if (f != NULL) {
                fo->reacting = body_ref(L, &e, f->value);
                if (fo->reacting != RIGMAT_NONE && fo->reacting == fo->body)
                    lerr(L, &e, f->value->loc, NULL, "a torque reacting on its own body does "
                            "nothing");
            }
        } else {
            check_keys(L, &e, fd->keys, fd->nkeys, keys_all, nall, fd->form);
            fo->kind = fd->kind;
            fo->joint = joint_ref(L, &e, fac->value);
            if (fo->joint != RIGMAT_NONE && !joint_unknown(L, fo->joint) &&
                    !joint_moves(&m->joints[fo->joint]))
                lerr(L, &e, fac->value->loc, NULL, "joint '%s' is fixed: a force across "
                        "it does no work", m->joints[fo->joint].name);
        }
        r = opt_word(L, &e, "role", role_words, NW(role_words), "a role (input or disturbance)",
                0);
        fo->role = r == 1 ? RIGMAT_ROLE_DISTURBANCE : RIGMAT_ROLE_INPUT;
        if (fac != NULL && forms == 1 && (fo->joint == RIGMAT_NONE || joint_unknown(L, fo->joint)))
            continue; /* the unit of the density follows from the joint */
        if (opt_density(L, &e, "density", forms == 1 ? rigmat_force_effort(m, fo) : RIGMAT_Q_FORCE,
                    &fo->density) == 1)
            must_nonneg(L, &e, "density", fo->density);
        if (opt_num(L, &e, "bandwidth", RIGMAT_Q_FREQUENCY, &fo->bandwidth_hz) == 1)
            must_positive(L, &e, "bandwidth", fo->bandwidth_hz);
        (void)read_limit(L, &e, forms == 1 ? rigmat_force_effort(m, fo) : RIGMAT_Q_FORCE,
                fo->role, &fo->has_limit, fo->limit);
    }
}

/* -------------------------------------------------------------- sensors */

/* A point sensor's axis: x, y or a vector. */
static void read_axis(struct ld *L, const struct ent *e, const rigmat_node *n, double out[2])
{
    if (n->type == RIGMAT_NODE_SCALAR && strcmp(n->text, "x") == 0) {
        out[0] = 1.0;
        out[1] = 0.0;
    } else if (n->type == RIGMAT_NODE_SCALAR && strcmp(n->text, "y") == 0) {
        out[0] = 0.0;
        out[1] = 1.0;
    } else if (n->type == RIGMAT_NODE_SEQ) {
        dir_node(L, e, n, out);
    } else {
        lerr(L, e, n->loc, "write x, y or a vector [x, y]", "expected an axis, got %s",
                n->type == RIGMAT_NODE_SCALAR ? n->text : rigmat_node_type_words(n->type));
    }
}

/* The sensor's `of`: a joint, a body, two bodies or a motor, by its kind. */
static int sensor_target(struct ld *L, const struct ent *e, const rigmat_sensor_desc *sd,
        const rigmat_node *of, rigmat_sensor *s)
{
    const rigmat_model *m = L->m;

    switch (sd->of) {
    case RIGMAT_OF_JOINT:
        s->joint = joint_ref(L, e, of);
        if (s->joint == RIGMAT_NONE || joint_unknown(L, s->joint))
            return 0;
        if (sd->joint_need == RIGMAT_NEED_MOVING && !joint_moves(&m->joints[s->joint])) {
            lerr(L, e, of->loc, sd->joint_hint, "joint '%s' is fixed: it has no coordinate",
                    m->joints[s->joint].name);
            return 0;
        }
        if (sd->joint_need == RIGMAT_NEED_DRIVEN && driven_unknown(L, s->joint))
            return 0;
        if (sd->joint_need == RIGMAT_NEED_DRIVEN &&
                m->joints[s->joint].driven == RIGMAT_DRIVEN_NONE) {
            lerr(L, e, of->loc, sd->joint_hint, "joint '%s' is not driven",
                    m->joints[s->joint].name);
            return 0;
        }
        return 1;
    case RIGMAT_OF_BODY:
        s->body = body_ref(L, e, of);
        return 1;
    case RIGMAT_OF_BODY_PAIR:
        if (of->type != RIGMAT_NODE_SEQ || of->n != 2) {
            lerr(L, e, of->loc, sd->of_hint, "expected a list of two body names");
            return 1;
        }
        s->body = body_ref(L, e, of->items[0]);
        s->body_b = body_ref(L, e, of->items[1]);
        if (s->body != RIGMAT_NONE && s->body == s->body_b)
            lerr(L, e, of->items[1]->loc, NULL,
                    "a relative reading of a body against itself is always zero");
        return 1;
    case RIGMAT_OF_MOTOR:
        s->motor = motor_ref(L, e, of);
        return 1;
    }
    return 1;
}

/* A bias random walk N: the density of the bias's rate, in the measured
 * unit q per s per sqrt(Hz) = q per sqrt(s) ("0.0004 deg/s/sqrt(s)" for a
 * gyro, whose q is deg/s).  1 read, 0 error. */
static int walk_node(struct ld *L, const struct ent *e, const rigmat_node *n, rigmat_kind q,
        double *out)
{
    rigmat_quantity v;
    rigmat_error err;
    rigmat_dim want = rigmat_units_dim(q), want_hz;
    char unit[64], hint[160];

    if (!want_scalar(L, e, n, "a bias random walk"))
        return 0;
    want.half[RIGMAT_DIM_TIME] = (signed char)(want.half[RIGMAT_DIM_TIME] - 1);
    want_hz = want; /* q/s/sqrt(Hz) = q s^-1/2 cycle^-1/2 */
    want_hz.half[RIGMAT_DIM_CYCLE] = (signed char)(want_hz.half[RIGMAT_DIM_CYCLE] - 1);
    memset(&err, 0, sizeof err);
    if (rigmat_units_parse(n->text, &v, &err) != RIGMAT_OK) {
        lerr(L, e, n->loc, err.hint[0] ? err.hint : NULL, "%s", err.message);
        return 0;
    }
    if (!rigmat_dim_equal(v.dim, want) && !rigmat_dim_equal(v.dim, want_hz)) {
        rigmat_units_format_dim(want, unit, sizeof unit);
        snprintf(hint, sizeof hint, "a random walk is the reading's unit per sqrt(s): "
                "write e.g. %s/sqrt(s)", rigmat_units_kind_symbol(q));
        lerr(L, e, n->loc, hint, "expected a bias random walk in %s, got '%s'", unit, n->text);
        return 0;
    }
    if (!isfinite(v.value)) {
        lerr(L, e, n->loc, NULL, "'%s' is out of range", n->text);
        return 0;
    }
    *out = v.value;
    return 1;
}

/* `bias: {random_walk: N}` or `bias: {sd: S, correlation_time: TAU}`
 * (README.md, "Sensor bias and filter"), in the measured quantity's unit q. */
static void read_bias(struct ld *L, const struct ent *e, rigmat_kind q, rigmat_sensor *s)
{
    static const char *const walk_keys[] = { "random_walk" };
    static const char *const markov_keys[] = { "sd", "correlation_time" };
    static const char *const all_keys[] = { "random_walk", "sd", "correlation_time" };
    const char *const hint = "write bias: {random_walk: 0.0004 deg/s/sqrt(s)} or "
                             "bias: {sd: 0.05 deg/s, correlation_time: 200 s}";
    const rigmat_entry *f = field(e, "bias");
    struct ent sub;

    if (f == NULL)
        return;
    if (f->value->type != RIGMAT_NODE_MAP) {
        lerr(L, e, f->value->loc, hint, "expected the bias as a mapping, got %s",
                rigmat_node_type_words(f->value->type));
        return;
    }
    sub = *e;
    sub.map = f->value;
    if (field(&sub, "random_walk") != NULL) {
        check_keys(L, &sub, walk_keys, NW(walk_keys), all_keys, NW(all_keys),
                "a random-walk bias");
        if (walk_node(L, &sub, field(&sub, "random_walk")->value, q, &s->bias_walk))
            must_positive(L, &sub, "random_walk", s->bias_walk);
        return;
    }
    check_keys(L, &sub, markov_keys, NW(markov_keys), all_keys, NW(all_keys),
            "a Gauss-Markov bias");
    if (field(&sub, "sd") == NULL && field(&sub, "correlation_time") == NULL) {
        lerr(L, e, f->value->loc, hint, "a bias needs 'random_walk', or 'sd' and "
                "'correlation_time'");
        return;
    }
    if (req_num(L, &sub, "sd", q, &s->bias_sd, hint))
        must_positive(L, &sub, "sd", s->bias_sd);
    if (req_num(L, &sub, "correlation_time", RIGMAT_Q_TIME, &s->bias_tau_s, hint))
        must_positive(L, &sub, "correlation_time", s->bias_tau_s);
    if (!(s->bias_sd > 0.0 && s->bias_tau_s > 0.0))
        s->bias_sd = s->bias_tau_s = 0.0;
}

static void read_sensors(struct ld *L, const rigmat_node *root)
{
    const rigmat_node *sec = section(L, root, "sensors");
    const size_t n = sec ? sec->n : 0;
    rigmat_model *m = L->m;
    const char *measures_words[RIGMAT_NSENSOR_KINDS];
    const size_t nwords = rigmat_sensor_words(measures_words, RIGMAT_NSENSOR_KINDS);
    size_t i;

    m->sensors = alloc_array(L, n, sizeof *m->sensors);
    if (m->sensors == NULL)
        return;
    for (i = 0; i < n; i++) {
        rigmat_sensor *s = &m->sensors[m->nsensors];
        const rigmat_sensor_desc *sd = NULL;
        const rigmat_entry *fm, *fof, *f;
        const char *keys[24];
        size_t nk = 0, t;
        rigmat_kind q = RIGMAT_Q_NUMBER;
        struct ent e;
        char form[64];
        int k, known_unit = 1;
        if (!entry(L, sec, i, "sensor", &e) || signal_name_taken(L, &e))
            continue;
        m->nsensors++;
        s->name = dup_s(L, e.name);
        s->loc = e.loc;
        s->joint = s->body = s->body_b = s->motor = RIGMAT_NONE;
        s->gain = 1.0;
        if (e.map->broken)
            continue;
        fm = field(&e, "measures");
        fof = field(&e, "of");
        if (fm == NULL) {
            missing(L, &e, "measures", "e.g. measures: rate");
            check_keys(L, &e, rigmat_sensor_all_keys, rigmat_sensor_nall_keys, NULL, 0,
                    "a sensor");
            continue;
        }
        k = word_node(L, &e, fm->value, measures_words, nwords, "a quantity a sensor measures");
        if (k < 0) {
            check_keys(L, &e, rigmat_sensor_all_keys, rigmat_sensor_nall_keys, NULL, 0,
                    "a sensor");
            continue;
        }
        /* the kind of this word; its point form when `at` or `axis` is given */
        for (t = 0; t < RIGMAT_NSENSOR_KINDS; t++) {
            const rigmat_sensor_desc *c = &rigmat_sensor_kinds[t];
            if (strcmp(c->word, measures_words[k]) != 0)
                continue;
            if (sd == NULL || (c->point_form && (field(&e, "at") != NULL ||
                                                        field(&e, "axis") != NULL)))
                sd = c;
        }
        s->kind = sd->kind;
        for (t = 0; t < rigmat_sensor_ncommon_keys; t++)
            keys[nk++] = rigmat_sensor_common_keys[t];
        for (t = 0; t < sd->nkeys; t++)
            keys[nk++] = sd->keys[t].key;
        if (fof == NULL)
            missing(L, &e, "of", "what the sensor is on: a joint, a body, a motor");
        else
            known_unit = sensor_target(L, &e, sd, fof->value, s);
        if (fof == NULL && sd->from != RIGMAT_MEASURED_FIXED)
            known_unit = 0;
        read_spec_keys(L, &e, sd->keys, sd->nkeys, s);
        /* an encoder reads an angle: a hinge's position, not a slider's */
        if (s->counts_per_rev > 0.0 && known_unit && s->joint != RIGMAT_NONE &&
                !rigmat_joint_kind(m->joints[s->joint].type)->rotational) {
            lerr(L, &e, field(&e, "counts_per_rev")->key_loc, "for a linear encoder give "
                    "'resolution' (the length of one count)", "'counts_per_rev' needs an "
                    "angle, and joint '%s' is a %s", m->joints[s->joint].name,
                    rigmat_joint_kind(m->joints[s->joint].type)->word);
            continue;
        }
        snprintf(form, sizeof form, "a '%s' sensor", sd->word);
        check_keys(L, &e, keys, nk, rigmat_sensor_all_keys, rigmat_sensor_nall_keys, form);
        if (!known_unit)
            continue; /* the unit of the values follows from the joint */
        q = rigmat_sensor_measured_kind(m, s);
        f = field(&e, "gain");
        if (f != NULL && num_node(L, &e, f->value, RIGMAT_Q_NUMBER, 0, &s->gain) &&
                s->gain == 0.0)
            lerr(L, &e, f->value->loc, "a sensor with gain 0 reads nothing", "gain must not "
                    "be zero");
        /* the offset is in the reading's unit: a plain number for counts */
        opt_num(L, &e, "offset", sd->output_unit != NULL && sd->output_unit(s) != NULL
                ? RIGMAT_Q_NUMBER : q, &s->offset);
        /* behind a `filter` the density enters before it and the noise
         * after it, so both may be given */
        if (field(&e, "noise") != NULL && field(&e, "density") != NULL &&
                field(&e, "filter") == NULL)
            lerr(L, &e, field(&e, "density")->key_loc, "give 'noise' (per sample) or "
                    "'density' (per sqrt(Hz)), not both", "'noise' and 'density' together");
        else {
            if (opt_num(L, &e, "noise", q, &s->noise) == 1) {
                must_nonneg(L, &e, "noise", s->noise);
                must_square_finite(L, &e, "noise", s->noise);
            }
            if (opt_density(L, &e, "density", q, &s->density) == 1)
                must_nonneg(L, &e, "density", s->density);
        }
        if (opt_num(L, &e, "bandwidth", RIGMAT_Q_FREQUENCY, &s->bandwidth_hz) == 1)
            must_positive(L, &e, "bandwidth", s->bandwidth_hz);
        if (opt_num(L, &e, "resolution", q, &s->resolution) == 1) {
            must_positive(L, &e, "resolution", s->resolution);
            must_square_finite(L, &e, "resolution", s->resolution);
        }
        read_bias(L, &e, q, s);
        if (opt_num(L, &e, "filter", RIGMAT_Q_FREQUENCY, &s->filter_hz) == 1) {
            must_positive(L, &e, "filter", s->filter_hz);
            if (s->bandwidth_hz > 0.0)
                lerr(L, &e, field(&e, "filter")->key_loc, "with 'filter' the density passes "
                        "the filter itself: drop 'bandwidth'", "'filter' and 'bandwidth' "
                        "together");
        }
    }
}

/* ------------------------------------------------------- operating point */

/* What an input name is: its kind and unit.  0 if it is no input, 2 if it
 * is one whose unit cannot be known (a force across a joint that did not
 * resolve, reported already). */
static int input_kind(const rigmat_model *m, const char *name, rigmat_kind *q)
{
    size_t k = find_motor(m, name);

    if (k != RIGMAT_NONE) {
        *q = rigmat_drive_kind_desc(m->motors[k].drive)->input;
        return 1;
    }
    k = find_force(m, name);
    if (k != RIGMAT_NONE) {
        const rigmat_force *f = &m->forces[k];
        *q = rigmat_force_effort(m, f);
        if (*q == RIGMAT_Q_NUMBER)
            return 2; /* across a joint that did not resolve: unit unknown */
        return 1;
    }
    k = find_joint(m, name);
    if (k != RIGMAT_NONE && m->joints[k].driven != RIGMAT_DRIVEN_NONE) {
        *q = joint_kind(&m->joints[k], (int)m->joints[k].driven - 1);
        return 1;
    }
    return 0;
}

/* The limit of the control input called name: 1 with lim filled, 0 when it
 * has none (or is no input). */
static int input_limit(const rigmat_model *m, const char *name, double lim[2])
{
    size_t k = find_motor(m, name);
    const double *src = NULL;

    if (k != RIGMAT_NONE && m->motors[k].has_limit)
        src = m->motors[k].limit;
    else if (k == RIGMAT_NONE && (k = find_force(m, name)) != RIGMAT_NONE &&
            m->forces[k].has_limit)
        src = m->forces[k].limit;
    else if (k == RIGMAT_NONE && (k = find_joint(m, name)) != RIGMAT_NONE &&
            m->joints[k].driven != RIGMAT_DRIVEN_NONE && m->joints[k].has_limit)
        src = m->joints[k].limit;
    if (src == NULL)
        return 0;
    lim[0] = src[0];
    lim[1] = src[1];
    return 1;
}

int rigmat_load_op_input_outside(const rigmat_model *m, const char *name, double value,
        rigmat_error *err)
{
    double lim[2];

    if (!input_limit(m, name, lim) || (value >= lim[0] && value <= lim[1]))
        return 0;
    (void)RIGMAT_FAIL(err, RIGMAT_EMODEL, "operating-point input '%s' is %.6g, outside its "
            "limit [%.6g, %.6g] (SI units)", name, value, lim[0], lim[1]);
    rigmat_error_hint(err, "lower the input, or widen its 'limit' if the hardware allows it");
    return 1;
}

static size_t input_names(const rigmat_model *m, const char **names, size_t max)
{
    size_t i, n = 0;
    for (i = 0; i < m->njoints && n < max; i++)
        if (m->joints[i].driven != RIGMAT_DRIVEN_NONE)
            names[n++] = m->joints[i].name;
    for (i = 0; i < m->nmotors && n < max; i++)
        names[n++] = m->motors[i].name;
    for (i = 0; i < m->nforces && n < max; i++)
        names[n++] = m->forces[i].name;
    return n;
}

/* which: 0 coordinates, 1 rates, 2 inputs. */
static void read_settings(struct ld *L, const struct ent *op, const char *key, int which,
        rigmat_setting **out, size_t *nout)
{
    const rigmat_entry *f = field(op, key);
    rigmat_model *m = L->m;
    const rigmat_node *map;
    size_t i, k;

    if (f == NULL || is_null(f->value))
        return;
    map = f->value;
    if (map->type != RIGMAT_NODE_MAP) {
        lerr(L, op, map->loc, "write e.g. {tilt: 0 deg}", "expected a mapping of names to "
                "values, got %s", rigmat_node_type_words(map->type));
        return;
    }
    *out = alloc_array(L, map->n, sizeof **out);
    if (*out == NULL)
        return;
    for (i = 0; i < map->n; i++) {
        const rigmat_entry *en = &map->entries[i];
        const char *names[64];
        char hint[160];
        rigmat_kind q = RIGMAT_Q_NUMBER;
        int ok = 1;
        size_t nn;
        for (k = 0; k < i; k++)
            if (strcmp(map->entries[k].key, en->key) == 0)
                ok = 0; /* duplicate key, reported already */
        if (!ok)
            continue;
        if (which == 2) {
            const int in = input_kind(m, en->key, &q);
            if (in == 2)
                continue; /* its joint was reported */
            if (!in && driven_unknown(L, find_joint(m, en->key)))
                continue; /* its driven word was reported */
            if (!in) {
                nn = input_names(m, names, 64);
                name_hint(hint, sizeof hint, en->key, names, nn);
                lerr(L, op, en->key_loc, hint, "unknown input '%s'", en->key);
                continue;
            }
        } else {
            const size_t j = find_joint(m, en->key);
            if (j == RIGMAT_NONE) {
                nn = collect_names(names, 64, m->joints, m->njoints, sizeof(rigmat_joint), 0);
                name_hint(hint, sizeof hint, en->key, names, nn);
                lerr(L, op, en->key_loc, hint, "unknown joint '%s'", en->key);
                continue;
            }
            if (!joint_moves(&m->joints[j])) {
                if (!joint_unknown(L, j))
                    lerr(L, op, en->key_loc, NULL, "joint '%s' is fixed: it has no coordinate",
                            en->key);
                continue;
            }
            if (driven_unknown(L, j))
                continue;
            if ((int)m->joints[j].driven > 0 && which + 1 >= (int)m->joints[j].driven) {
                lerr(L, op, en->key_loc, "set the driven value under 'inputs'",
                        "joint '%s' is driven: its %s is an input, not a state", en->key,
                        which ? "rate" : "coordinate");
                continue;
            }
            q = joint_kind(&m->joints[j], which);
        }
        {
            rigmat_setting *s = &(*out)[*nout];
            struct ent sub = *op;
            if (!num_node(L, &sub, en->value, q, 0, &s->value))
                continue;
            s->name = dup_s(L, en->key);
            s->loc = en->key_loc;
            (*nout)++;
        }
    }
}

/* The unit kind read_settings gives the key of section which (0
 * coordinates, 1 rates, 2 inputs) when it accepts the key: 1 with *q set,
 * 0 when it would refuse it. */
static int setting_kind(const rigmat_model *m, int which, const char *key, rigmat_kind *q)
{
    size_t j;

    if (which == 2)
        return input_kind(m, key, q) == 1;
    j = find_joint(m, key);
    if (j == RIGMAT_NONE || !joint_moves(&m->joints[j]) ||
            ((int)m->joints[j].driven > 0 && which + 1 >= (int)m->joints[j].driven))
        return 0;
    *q = joint_kind(&m->joints[j], which);
    return 1;
}

int rigmat_load_plain_number_text(const char *s)
{
    size_t i;

    if (!((s[0] >= '0' && s[0] <= '9') ||
                ((s[0] == '-' || s[0] == '+' || s[0] == '.') && s[1] >= '0' && s[1] <= '9') ||
                ((s[0] == '-' || s[0] == '+') && s[1] == '.' && s[2] >= '0' && s[2] <= '9')))
        return 0;
    for (i = 1; s[i] != '\0'; i++) {
        const char c = s[i];
        if (c == ' ') {
            if (s[i + 1] == ' ' || s[i + 1] == '\0')
                return 0; /* two spaces, or a trailing one */
        } else if (!((c >= '0' && c <= '9') || (c >= 'a' && c <= 'z') ||
                           (c >= 'A' && c <= 'Z') || strchr(".+-*/^_()", c) != NULL)) {
            return 0;
        }
    }
    return 1;
}

rigmat_status rigmat_load_op_value(const rigmat_model *m, const char *set,
        const rigmat_options *opt, int *which, char *name, size_t name_len, double *value)
{
    static const char *const sections[] = { "coordinates", "rates", "inputs" };
    static const char head[] = "operating_point.";
    const char *p = set, *eq = strchr(set, '=');
    rigmat_diags files, d;
    rigmat_node *node = NULL, plain;
    char text[128];
    rigmat_kind q = RIGMAT_Q_NUMBER;
    rigmat_status st;
    size_t k, len;
    struct ld L;
    struct ent e;

    plain.text = NULL;
    if (eq == NULL || strncmp(p, head, sizeof head - 1) != 0)
        return RIGMAT_EMODEL;
    p += sizeof head - 1;
    for (k = 0; k < NW(sections); k++) {
        len = strlen(sections[k]);
        if (strncmp(p, sections[k], len) == 0 && p[len] == '.')
            break;
    }
    if (k == NW(sections))
        return RIGMAT_EMODEL;
    *which = (int)k;
    p += strlen(sections[k]) + 1;
    len = (size_t)(eq - p);
    if (len == 0 || len >= name_len)
        return RIGMAT_EMODEL;
    for (k = 0; k < len; k++)
        if (!((p[k] >= 'a' && p[k] <= 'z') || (p[k] >= 'A' && p[k] <= 'Z') ||
                    (p[k] >= '0' && p[k] <= '9') || p[k] == '_' || p[k] == '-'))
            return RIGMAT_EMODEL; /* a list element or a deeper path: not a setting */
    memcpy(name, p, len);
    name[len] = '\0';
    if (!setting_kind(m, *which, name, &q))
        return RIGMAT_EMODEL;
    /* the value as rigmat_load_sets parses it, then as read_settings reads
     * it; a text the parser reads as the plain scalar of the same
     * characters skips the parser (its tree, 60% of the cost of a value) */
    rigmat_diags_init(&files);
    rigmat_diags_init(&d);
    if (strlen(eq + 1) < sizeof text && rigmat_load_plain_number_text(eq + 1)) {
        const rigmat_loc at = { "--set", 1, (unsigned long)(eq - set) + 2 };
        memset(&plain, 0, sizeof plain);
        memcpy(text, eq + 1, strlen(eq + 1) + 1);
        plain.type = RIGMAT_NODE_SCALAR;
        plain.loc = at;
        plain.text = text;
        plain.plain = 1;
        st = RIGMAT_OK;
    } else {
        st = rigmat_load_yaml_text(eq + 1, strlen(eq + 1), "--set", 1,
                (unsigned long)(eq - set) + 2, opt, &files, &d, &node);
    }
    if (st == RIGMAT_OK && node == NULL && plain.text == NULL)
        st = RIGMAT_EMODEL;
    if (st == RIGMAT_OK) {
        memset(&L, 0, sizeof L);
        L.d = &d;
        L.opt = opt;
        memset(&e, 0, sizeof e);
        e.name = "operating_point";
        if (!num_node(&L, &e, node != NULL ? node : &plain, q, 0, value))
            st = L.nomem ? RIGMAT_ENOMEM : RIGMAT_EMODEL;
    }
    if (st == RIGMAT_OK && d.errors > 0)
        st = RIGMAT_EMODEL;
    rigmat_node_free(node);
    rigmat_diags_release(&d);
    rigmat_diags_release(&files);
    return st;
}

static void read_namelist(struct ld *L, const struct ent *e, const rigmat_node *n,
        rigmat_namelist *out)
{
    size_t i;

    if (is_null(n))
        return;
    if (n->type != RIGMAT_NODE_SEQ) {
        lerr(L, e, n->loc, "write a list: [a, b]", "expected a list of names, got %s",
                rigmat_node_type_words(n->type));
        return;
    }
    out->names = alloc_array(L, n->n, sizeof *out->names);
    out->locs = alloc_array(L, n->n, sizeof *out->locs);
    if (out->names == NULL || out->locs == NULL)
        return;
    for (i = 0; i < n->n; i++) {
        size_t k;
        int dup = 0;
        if (!want_scalar(L, e, n->items[i], "a name"))
            continue;
        for (k = 0; k < out->count; k++)
            if (strcmp(out->names[k], n->items[i]->text) == 0)
                dup = 1;
        if (dup) {
            lerr(L, e, n->items[i]->loc, "each name may appear once", "'%s' is listed twice",
                    n->items[i]->text);
            continue;
        }
        out->names[out->count] = dup_s(L, n->items[i]->text);
        out->locs[out->count] = n->items[i]->loc;
        if (out->names[out->count] != NULL)
            out->count++;
    }
}

static void read_operating_point(struct ld *L, const rigmat_node *root)
{
    static const char *const keys[] = { "coordinates", "rates", "inputs", "solve" };
    const rigmat_entry *f = rigmat_node_get(root, "operating_point");
    rigmat_model *m = L->m;
    struct ent e;
    size_t i;

    if (f == NULL || is_null(f->value))
        return;
    e.name = "operating_point";
    e.loc = f->key_loc;
    e.map = f->value;
    snprintf(e.words, sizeof e.words, "%s", RIGMAT_LOAD_OP_WORDS);
    if (f->value->type != RIGMAT_NODE_MAP) {
        lerr(L, NULL, f->value->loc, NULL, "expected a mapping (coordinates, rates, inputs, "
                "solve), got %s", rigmat_node_type_words(f->value->type));
        return;
    }
    check_keys(L, &e, keys, NW(keys), NULL, 0, "the operating point");
    read_settings(L, &e, "coordinates", 0, &m->op_coordinates, &m->nop_coordinates);
    read_settings(L, &e, "rates", 1, &m->op_rates, &m->nop_rates);
    read_settings(L, &e, "inputs", 2, &m->op_inputs, &m->nop_inputs);
    /* a given input outside its limit is a model error (README.md,
     * "Limits"): the hardware cannot hold that point */
    for (i = 0; i < m->nop_inputs; i++) {
        const rigmat_setting *st = &m->op_inputs[i];
        rigmat_error le;
        if (st->name == NULL)
            continue; /* its copy ran out of memory, recorded already */
        if (rigmat_load_op_input_outside(m, st->name, st->value, &le))
            lerr(L, &e, st->loc, le.hint, "%s", le.message);
    }
    f = field(&e, "solve");
    if (f == NULL)
        return;
    read_namelist(L, &e, f->value, &m->op_solve);
    for (i = 0; i < m->op_solve.count; i++) {
        const char *s = m->op_solve.names[i];
        const char *dot = strrchr(s, '.');
        rigmat_kind q;
        char base[128];
        size_t j;
        if (input_kind(m, s, &q)) {
            j = find_joint(m, s);
            if (j == RIGMAT_NONE || m->joints[j].driven == RIGMAT_DRIVEN_NONE)
                continue;
        }
        snprintf(base, sizeof base, "%s", s);
        if (dot != NULL && (size_t)(dot - s) < sizeof base)
            base[dot - s] = '\0';
        j = find_joint(m, base);
        if (j != RIGMAT_NONE && joint_unknown(L, j))
            continue; /* its state names are not known */
        if (j != RIGMAT_NONE && joint_moves(&m->joints[j])) {
            const rigmat_joint_desc *jd = rigmat_joint_kind(m->joints[j].type);
            const char *coord = jd->suffix[0] + 1, *rate = jd->suffix[1] + 1;
            if (dot == NULL || strcmp(dot + 1, coord) == 0 || strcmp(dot + 1, rate) == 0)
                continue;
            lerr(L, &e, m->op_solve.locs[i], NULL, "joint '%s' has '%s.%s' and '%s.%s'", base,
                    base, coord, base, rate);
            continue;
        }
        {
            const char *names[128];
            char hint[160];
            size_t nn = collect_names(names, 64, m->joints, m->njoints, sizeof(rigmat_joint), 0);
            nn += input_names(m, names + nn, 64);
            name_hint(hint, sizeof hint, s, names, nn);
            lerr(L, &e, m->op_solve.locs[i], hint, "unknown name '%s' in solve: neither a "
                    "coordinate, a rate nor an input", s);
        }
    }
}

/* ------------------------------------------------------------ closures */

static const char *const closure_words[] = { "hinge", "slider" };
static const char *const closure_keys[] = { "type", "bodies", "at", "axis" };

/* The body above b along its joint; RIGMAT_NONE at the ground, for a body
 * without a joint, or for a parent that did not resolve (an error already
 * reported: the marking below must not index with it). */
static size_t body_above(const rigmat_model *m, size_t b)
{
    size_t p;

    if (b == 0 || b >= m->nbodies || m->bodies[b].joint == RIGMAT_NONE ||
            m->bodies[b].joint >= m->njoints)
        return RIGMAT_NONE;
    p = m->joints[m->bodies[b].joint].parent;
    return p < m->nbodies ? p : RIGMAT_NONE;
}

/* Mark the coordinates on the tree paths from each closure's two bodies
 * up to their nearest common ancestor: the joints of the loop. */
static void mark_loop(struct ld *L, const rigmat_closure *cl, int mark)
{
    rigmat_model *m = L->m;
    size_t a, b, steps;
    unsigned char *up;

    if (cl->body[0] >= m->nbodies || cl->body[1] >= m->nbodies)
        return;
    up = alloc_array(L, m->nbodies, 1);
    if (up == NULL)
        return;
    /* the bodies above a (a included) */
    for (a = cl->body[0], steps = 0; a != RIGMAT_NONE && steps++ <= m->nbodies;
            a = body_above(m, a))
        up[a] = 1;
    /* climb from b to the first body above a: the common ancestor */
    for (b = cl->body[1], steps = 0; b != RIGMAT_NONE && !up[b] && steps++ <= m->nbodies;
            b = body_above(m, b))
        if (body_above(m, b) != RIGMAT_NONE && !m->joints[m->bodies[b].joint].in_loop)
            m->joints[m->bodies[b].joint].in_loop = mark;
    for (a = cl->body[0], steps = 0; a != RIGMAT_NONE && a != b && steps++ <= m->nbodies;
            a = body_above(m, a))
        if (body_above(m, a) != RIGMAT_NONE && !m->joints[m->bodies[a].joint].in_loop)
            m->joints[m->bodies[a].joint].in_loop = mark;
    free(up);
}

static void read_closures(struct ld *L, const rigmat_node *root)
{
    const rigmat_node *sec = section(L, root, "closures");
    const size_t n = sec ? sec->n : 0;
    rigmat_model *m = L->m;
    const size_t before = L->d->errors;
    size_t i, j, nloop = 0;

    if (n == 0)
        return;
    m->closures = alloc_array(L, n, sizeof *m->closures);
    if (m->closures == NULL)
        return;
    for (i = 0; i < n; i++) {
        rigmat_closure *c = &m->closures[m->nclosures];
        const rigmat_entry *f;
        struct ent e;
        int t, ok = 1;
        if (!entry(L, sec, i, "closure", &e))
            continue;
        m->nclosures++;
        c->name = dup_s(L, e.name);
        c->loc = e.loc;
        c->body[0] = c->body[1] = RIGMAT_NONE;
        c->axis[0] = 1.0;
        check_keys(L, &e, closure_keys, NW(closure_keys), NULL, 0, "a closure");
        f = field(&e, "type");
        t = -1;
        if (f == NULL)
            missing(L, &e, "type", "hinge (two points coincide) or slider (a point on a line)");
        else
            t = word_node(L, &e, f->value, closure_words, NW(closure_words),
                    "a closure type (hinge or slider)");
        c->type = t == 1 ? RIGMAT_CLOSURE_SLIDER : RIGMAT_CLOSURE_HINGE;
        if (t == 0 && field(&e, "axis") != NULL)
            lerr(L, &e, field(&e, "axis")->key_loc, "a hinge closure joins two points; "
                    "'axis' belongs to a slider closure", "'axis' does not apply to a hinge "
                    "closure");
        else if (t == 1 && field(&e, "axis") != NULL &&
                !dir_node(L, &e, field(&e, "axis")->value, c->axis))
            ok = 0;
        f = field(&e, "bodies");
        if (f == NULL) {
            missing(L, &e, "bodies", "the two bodies it joins: bodies: [coupler, rocker]");
            ok = 0;
        } else if (f->value->type != RIGMAT_NODE_SEQ || f->value->n != 2) {
            lerr(L, &e, f->value->loc, "write bodies: [first, second]", "expected a list of "
                    "two bodies");
            ok = 0;
        } else {
            c->body[0] = body_ref(L, &e, f->value->items[0]);
            c->body[1] = body_ref(L, &e, f->value->items[1]);
            if (c->body[0] == RIGMAT_NONE || c->body[1] == RIGMAT_NONE)
                ok = 0;
            else if (c->body[0] == c->body[1]) {
                lerr(L, &e, f->value->items[1]->loc, "a closure joins two different bodies",
                        "closure '%s' joins body '%s' to itself", e.name,
                        m->bodies[c->body[0]].name);
                ok = 0;
            }
        }
        f = field(&e, "at");
        if (f == NULL) {
            missing(L, &e, "at", "the point on each body, in its own frame: "
                    "at: [[x, y], [x, y]]");
        } else if (f->value->type != RIGMAT_NODE_SEQ || f->value->n != 2) {
            lerr(L, &e, f->value->loc, "write at: [[x, y], [x, y]], one point per body in its "
                    "own frame", "expected a list of two points");
        } else {
            (void)vec2_node(L, &e, f->value->items[0], RIGMAT_Q_LENGTH, c->at_m[0]);
            (void)vec2_node(L, &e, f->value->items[1], RIGMAT_Q_LENGTH, c->at_m[1]);
        }
        if (ok) /* in_loop: 1 + the index of the first closure whose loop holds it */
            mark_loop(L, c, (int)m->nclosures);
    }
    if (L->nomem)
        return;
    for (j = 0; j < m->njoints; j++) {
        rigmat_joint *jt = &m->joints[j];
        if (!jt->in_loop)
            continue;
        if (!joint_moves(jt)) {
            jt->in_loop = 0;
            continue;
        }
        nloop++;
        if (jt->driven != RIGMAT_DRIVEN_NONE && !driven_unknown(L, j)) {
            struct ent e;
            e.name = jt->name;
            e.loc = jt->loc;
            e.map = NULL;
            snprintf(e.words, sizeof e.words, "joint '%s'", jt->name);
            lerr(L, &e, jt->loc, "drive the loop with a motor or a force across the joint "
                    "instead", "joint '%s' is driven and lies inside the closed loop of closure "
                    "'%s': a driven joint inside a loop is not supported in this version",
                    jt->name, m->closures[jt->in_loop - 1].name);
        }
    }
    if (nloop < 2 * m->nclosures + 1 && L->d->errors == before) {
        lerr(L, NULL, m->closures[0].loc, "each closure takes two degrees of freedom from "
                "the joints of its loop; a loop that cannot move is a structure",
                "the closures leave no degree of freedom: %zu loop coordinates, %zu closure "
                "equations", nloop, 2 * m->nclosures);
        return;
    }
    m->closures_pending = L->d->errors == before;
    m->closure_sv_ratio = 1.0;
}

/* `independent: [crank]`: joints of the loops, as many as its degrees of
 * freedom. */
static void read_independent(struct ld *L, const rigmat_node *root)
{
    const rigmat_entry *f = rigmat_node_get(root, "independent");
    rigmat_model *m = L->m;
    size_t i, j, nloop = 0;

    if (f == NULL || is_null(f->value))
        return;
    if (m->nclosures == 0) {
        lerr(L, NULL, f->key_loc, "independent coordinates are chosen only where 'closures:' "
                "closes a loop; remove this line", "'independent' without closures");
        return;
    }
    read_namelist(L, NULL, f->value, &m->independent);
    for (j = 0; j < m->njoints; j++)
        nloop += m->joints[j].in_loop != 0;
    for (i = 0; i < m->independent.count; i++) {
        const char *nm = m->independent.names[i];
        j = find_joint(m, nm);
        if (j == RIGMAT_NONE) {
            const char *names[64];
            char hint[160];
            const size_t nn = collect_names(names, 64, m->joints, m->njoints,
                    sizeof(rigmat_joint), 0);
            name_hint(hint, sizeof hint, nm, names, nn);
            lerr(L, NULL, m->independent.locs[i], hint, "unknown joint '%s'", nm);
        } else if (!m->joints[j].in_loop) {
            lerr(L, NULL, m->independent.locs[i], "name joints whose coordinates move the "
                    "points of a closure", "joint '%s' is not in a closed loop", nm);
        }
    }
    if (nloop >= 2 * m->nclosures && m->independent.count != nloop - 2 * m->nclosures)
        lerr(L, NULL, f->value->loc, "name as many joints of the loops as they have degrees "
                "of freedom (loop coordinates minus two per closure)", "'independent' names "
                "%zu joints, but the loops have %zu degrees of freedom", m->independent.count,
                nloop - 2 * m->nclosures);
}

/* ------------------------------------------------------------ top level */

static const char *const top_keys[] = { "rigmat", "name", "gravity", "slope", "bodies",
    "joints", "springs", "dampers", "motors", "forces", "sensors", "operating_point", "order",
    "states", "inputs", "outputs", "closures", "independent" };

static void read_top(struct ld *L, const rigmat_node *root)
{
    static const char *const orders[] = { "default", "interleaved" };
    rigmat_model *m = L->m;
    const rigmat_entry *f;
    struct ent e;
    int o;

    e.name = "model";
    e.loc = root->loc;
    e.map = root;
    e.words[0] = '\0';
    check_keys(L, &e, top_keys, NW(top_keys), NULL, 0, "a model");
    f = field(&e, "rigmat");
    if (f == NULL) {
        lerr(L, NULL, root->loc, "start the file with the line 'rigmat: 1'",
                "missing 'rigmat: 1', the schema version");
    } else if (f->value->type != RIGMAT_NODE_SCALAR || strcmp(f->value->text, "1") != 0) {
        lerr(L, NULL, f->value->loc, "this rigmat reads schema 1; write 'rigmat: 1'",
                "schema version '%s' is not supported",
                f->value->type == RIGMAT_NODE_SCALAR ? f->value->text : "?");
    }
    f = field(&e, "name");
    if (f != NULL && want_scalar(L, NULL, f->value, "a name for the model"))
        m->name = dup_s(L, f->value->text);
    m->gravity_m_s2 = 9.80665; /* standard gravity, CGPM 1901 */
    if (opt_num(L, &e, "gravity", RIGMAT_Q_ACCELERATION, &m->gravity_m_s2) == 1)
        must_nonneg(L, &e, "gravity", m->gravity_m_s2);
    if (opt_num(L, &e, "slope", RIGMAT_Q_ANGLE, &m->slope_rad) == 1 &&
            !(fabs(m->slope_rad) < M_PI / 2))
        lerr(L, NULL, field(&e, "slope")->value->loc, NULL, "a slope must lie between -90 and "
                "90 deg");
    o = opt_word(L, &e, "order", orders, NW(orders), "an order (default or interleaved)", 0);
    m->order_interleaved = o == 1;
    f = field(&e, "states");
    if (f != NULL)
        read_namelist(L, NULL, f->value, &m->order_states);
    f = field(&e, "inputs");
    if (f != NULL)
        read_namelist(L, NULL, f->value, &m->order_inputs);
    f = field(&e, "outputs");
    if (f != NULL)
        read_namelist(L, NULL, f->value, &m->order_outputs);
}

rigmat_status rigmat_load_schema(const rigmat_node *root, rigmat_model *m,
        const rigmat_options *opt, rigmat_diags *d)
{
    struct ld L;
    const size_t before = d->errors;

    L.m = m;
    L.d = d;
    L.opt = opt;
    L.nomem = 0;
    L.lost_child = 0;
    L.joint_unknown = NULL;
    if (root == NULL) {
        const rigmat_loc at = { m->file, 1, 1 };
        lerr(&L, NULL, at, "a model starts with 'rigmat: 1'", "the model file is empty");
        return L.nomem ? RIGMAT_ENOMEM : RIGMAT_EMODEL;
    }
    if (root->type != RIGMAT_NODE_MAP) {
        lerr(&L, NULL, root->loc, "a model starts with 'rigmat: 1' and then its sections",
                "expected a mapping of keys, got %s", rigmat_node_type_words(root->type));
        return L.nomem ? RIGMAT_ENOMEM : RIGMAT_EMODEL;
    }
    read_top(&L, root);
    read_bodies(&L, root);
    if (m->nbodies < 2 && d->errors == before)
        lerr(&L, NULL, root->loc, "add a 'bodies:' section, and joints that carry them",
                "the model has no bodies besides ground: nothing moves");
    if (!L.nomem)
        read_joints(&L, root);
    if (!L.nomem)
        check_tree(&L);
    if (!L.nomem)
        read_links(&L, root, 1);
    if (!L.nomem)
        read_links(&L, root, 0);
    if (!L.nomem)
        read_motors(&L, root);
    if (!L.nomem)
        read_forces(&L, root);
    if (!L.nomem)
        read_sensors(&L, root);
    if (!L.nomem)
        read_closures(&L, root);
    if (!L.nomem)
        read_independent(&L, root);
    if (!L.nomem)
        read_operating_point(&L, root);
    free(L.joint_unknown);
    if (L.nomem)
        return RIGMAT_ENOMEM;
    return d->errors > before ? RIGMAT_EMODEL : RIGMAT_OK;
}

struct rigmat_load_base {
    char *path;
    rigmat_diags *files; /* the interned file names the tree's locs point to */
    rigmat_node *root;   /* parsed, counted, parts merged; read-only after */
};

void rigmat_load_base_free(rigmat_load_base *b)
{
    if (b == NULL)
        return;
    rigmat_node_free(b->root);
    if (b->files != NULL) {
        rigmat_diags_release(b->files);
        free(b->files);
    }
    free(b->path);
    free(b);
}

rigmat_status rigmat_load_base_new(const char *path, const rigmat_options *opt,
        rigmat_load_base **out, rigmat_diags *diags)
{
    rigmat_load_base *b;
    rigmat_status st;
    const size_t before = diags->errors;
    size_t bytes = 0;
    int stop = 0;

    *out = NULL;
    b = calloc(1, sizeof *b);
    if (b == NULL)
        return RIGMAT_ENOMEM;
    b->files = calloc(1, sizeof *b->files);
    b->path = malloc(strlen(path) + 1);
    if (b->files == NULL || b->path == NULL) {
        free(b->files);
        b->files = NULL;
        rigmat_load_base_free(b);
        return RIGMAT_ENOMEM;
    }
    strcpy(b->path, path);
    rigmat_diags_init(b->files);
    /* the stages of rigmat_model_load before the overrides, in its order */
    st = rigmat_load_yaml_file_sized(path, opt, b->files, diags, &b->root, &bytes);
    if (st == RIGMAT_OK && b->root == NULL)
        st = RIGMAT_EMODEL;
    if (st == RIGMAT_OK)
        st = rigmat_load_counts(b->root, opt, diags);
    if (st == RIGMAT_OK)
        st = rigmat_load_parts(b->root, path, bytes, opt, b->files, diags, &stop);
    if (st == RIGMAT_OK && (stop || diags->errors > before))
        st = RIGMAT_EMODEL;
    if (st != RIGMAT_OK) {
        rigmat_load_base_free(b);
        return st;
    }
    *out = b;
    return RIGMAT_OK;
}

/* A model with nothing loaded but its file name (path), and its own list
 * for interned file names; NULL when out of memory. */
static rigmat_model *model_shell(const char *path, const rigmat_options *opt, rigmat_diags *diags)
{
    rigmat_model *m = calloc(1, sizeof *m);
    struct ld L;

    if (m == NULL)
        return NULL;
    m->owner_diags = calloc(1, sizeof *m->owner_diags);
    L.m = m;
    L.d = diags;
    L.opt = opt;
    L.nomem = 0;
    m->file = m->owner_diags ? dup_s(&L, path) : NULL;
    if (m->file == NULL) {
        rigmat_model_free(m);
        return NULL;
    }
    rigmat_diags_init(m->owner_diags);
    return m;
}

/* The stages after the parts, on root (taken): the overrides and the
 * schema unless st2 is RIGMAT_ENOMEM or stop, then the layout when no
 * error was added since before.  *out = m, or m freed. */
static rigmat_status load_rest(rigmat_model *m, rigmat_node *root, rigmat_status st2, int stop,
        const char *const *sets, size_t nsets, const rigmat_options *opt, rigmat_diags *diags,
        size_t before, rigmat_model **out)
{
    if (st2 != RIGMAT_ENOMEM && !stop)
        st2 = rigmat_load_sets(root, sets, nsets, opt, m->owner_diags, diags);
    if (st2 != RIGMAT_ENOMEM && !stop)
        st2 = rigmat_load_schema(root, m, opt, diags);
    rigmat_node_free(root);
    if (st2 == RIGMAT_ENOMEM) {
        rigmat_model_free(m);
        return st2;
    }
    if (diags->errors == before) {
        st2 = rigmat_layout_build(m, diags);
        if (st2 == RIGMAT_ENOMEM) {
            rigmat_model_free(m);
            return st2;
        }
    }
    if (diags->errors > before) {
        rigmat_model_free(m);
        return RIGMAT_EMODEL;
    }
    *out = m;
    return RIGMAT_OK;
}

rigmat_status rigmat_model_load_from(const rigmat_load_base *b, const char *const *sets,
        size_t nsets, const rigmat_options *opt, rigmat_model **out, rigmat_diags *diags)
{
    const size_t before = diags->errors;
    rigmat_model *m;
    rigmat_node *root;

    *out = NULL;
    m = model_shell(b->path, opt, diags);
    if (m == NULL)
        return RIGMAT_ENOMEM;
    root = rigmat_node_copy(b->root);
    if (root == NULL) {
        rigmat_model_free(m);
        return RIGMAT_ENOMEM;
    }
    return load_rest(m, root, RIGMAT_OK, 0, sets, nsets, opt, diags, before, out);
}

rigmat_status rigmat_model_load(const char *path, const char *const *sets, size_t nsets,
        const rigmat_options *opt, rigmat_model **out, rigmat_diags *diags)
{
    const size_t before = diags->errors;
    rigmat_model *m;
    rigmat_node *root = NULL;
    rigmat_status st, st2;
    size_t bytes = 0;
    int stop = 0;

    *out = NULL;
    m = model_shell(path, opt, diags);
    if (m == NULL)
        return RIGMAT_ENOMEM;
    st = rigmat_load_yaml_file_sized(path, opt, m->owner_diags, diags, &root, &bytes);
    if (st == RIGMAT_EIO || st == RIGMAT_ENOMEM || (st != RIGMAT_OK && root == NULL)) {
        rigmat_node_free(root);
        rigmat_model_free(m);
        return st;
    }
    /* Entry counts before any part is read: 300 bodies that each name a
     * large part are refused at once (issue 10).  Keep going after
     * duplicate keys: more errors are worth reporting; not after a count
     * or the parts' total budget, which leave nothing worth reading. */
    st2 = rigmat_load_counts(root, opt, diags);
    if (st2 == RIGMAT_OK)
        st2 = rigmat_load_parts(root, path, bytes, opt, m->owner_diags, diags, &stop);
    else
        stop = 1;
    return load_rest(m, root, st2, stop, sets, nsets, opt, diags, before, out);
}
