/* cmd_sweep.c - `rigmat sweep FILE --vary PATH=FROM:TO:COUNT ...`: the
 * linear (and sampled) model at every point of a grid (src/study/sweep.h).
 *
 * Formats: json (default), csv, c, numpy through the result writer
 * (src/emit), and npy: a folder of NumPy .npy files (format version 1.0),
 * one stacked array per matrix (A.npy: points x n x n, ...), grid.npy
 * (points x axes, SI), ok.npy (1 or 0 per point), and index.json naming
 * the signals, units, order hash, grid axes and the failed points.  In
 * the npy arrays a failed point's numbers are NaN.
 *
 * JSON (README.md, "rigmat sweep"): the head, then
 *   grid      {axes: [{vary, path, unit, si_unit, from, to, count, values}],
 *              shape}   values in SI; points in C order (last axis fastest)
 *   period, method   with --rate
 *   failed    how many points failed
 *   points    [{index, values (SI), ok, reason, sets, A, B, C, D,
 *              operating_point {x, u, y}[, Ad, Bd, Gd, Cd, Dd, Ed]}]
 * The exports (csv, c, numpy) carry grid (points x axes), ok, and for each
 * good point p<i>_A, p<i>_B, ...
 */
#include "cli.h"
#include "sweep.h"
#include "units.h"

#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

static const char *const sweep_usage[] = {
    "rigmat sweep FILE --vary PATH=FROM:TO:COUNT [--vary ...] [--set PATH=VALUE]...",
    "             [--rate FREQ [--method METHOD]] [--threads N] [--format FORMAT] [-o FILE|DIR]",
    "             [--catalog DIR] [--name NAME] [--ctype double|float]",
    "FORMAT: json, csv, c, numpy, npy (-o DIR)",
    "json unless --format says otherwise; at most 1000000 points", NULL
};

static const char *const sweep_formats[] = { "json", "csv", "c", "numpy", "npy", NULL };

static const char *const block_name[RIGMAT_SB_COUNT] = {
    "A", "B", "C", "D", "x0", "u0", "y0", "Ad", "Bd", "Gd", "Cd", "Dd", "Ed"
};

/* ------------------------------------------------------------ progress */

struct progress {
    FILE *err;
    struct timespec start, last;
    int shown;
};

static double seconds_between(const struct timespec *a, const struct timespec *b)
{
    return (double)(b->tv_sec - a->tv_sec) + 1e-9 * (double)(b->tv_nsec - a->tv_nsec);
}

/* A bar on a terminal, once the sweep has run a second, ten times a second at most. */
static void progress_cb(void *ctx, size_t done, size_t total)
{
    struct progress *pr = ctx;
    struct timespec now;
    char bar[41];
    size_t i, fill;

    clock_gettime(CLOCK_MONOTONIC, &now);
    if (seconds_between(&pr->start, &now) < 1.0 && !pr->shown)
        return;
    if (pr->shown && done < total && seconds_between(&pr->last, &now) < 0.1)
        return;
    pr->last = now;
    pr->shown = 1;
    fill = total > 0 ? done * 40 / total : 40;
    for (i = 0; i < 40; i++)
        bar[i] = i < fill ? '#' : '.';
    bar[40] = '\0';
    fprintf(pr->err, "\rsweep [%s] %lu/%lu points", bar, (unsigned long)done,
            (unsigned long)total);
    fflush(pr->err);
}

/* ------------------------------------------------------------ npy */

static int is_vector(size_t b)
{
    return b == RIGMAT_SB_X0 || b == RIGMAT_SB_U0 || b == RIGMAT_SB_Y0;
}

/* A file of the folder whose bytes are built whole (buf taken, freed on
 * failure): no stream, so no copying as it grows.  0, or -1 when out of
 * memory. */
static int add_file_bytes(struct cli_env *env, const char *name, char *buf, size_t len)
{
    struct cli_files *files = &env->files;
    struct cli_file *cf;

    if (files->n == sizeof files->items / sizeof files->items[0]) {
        free(buf);
        return -1;
    }
    cf = &files->items[files->n];
    memset(cf, 0, sizeof *cf);
    cf->name = malloc(strlen(name) + 1);
    if (cf->name == NULL) {
        free(buf);
        return -1;
    }
    strcpy(cf->name, name);
    cf->buf = buf;
    cf->len = len;
    files->n++;
    return 0;
}

/* 1 when a double's bytes in memory are little-endian IEEE (the host's
 * integer and floating-point orders agree on every platform this builds
 * on; the test reads 1.0's sign-and-exponent byte). */
static int host_little_endian(void)
{
    const double one = 1.0;
    unsigned char b[sizeof one];

    memcpy(b, &one, sizeof one);
    return sizeof one == 8 && b[7] == 0x3f && b[6] == 0xf0 && b[0] == 0;
}

/* One array in NumPy's .npy format, version 1.0 (NumPy documentation,
 * "numpy.lib.format"): the magic "\x93NUMPY", version 1 0, a little-endian
 * 16-bit header length, the header dict padded with spaces and ended by a
 * newline so the data starts at a multiple of 64 bytes, then the data,
 * little-endian IEEE doubles in C order (whatever the host's order).  The
 * data are nchunks runs of chunk doubles, run k at data + k * stride: a
 * block of every point's slot, or one contiguous array (nchunks 1).
 * 0, or -1 when out of memory. */
static int add_npy(struct cli_env *env, const char *name, const size_t *shape, size_t ndim,
        const double *data, size_t chunk, size_t stride, size_t nchunks)
{
    char head[256], *buf;
    unsigned char *at;
    size_t used, total, i, j, k;
    uint64_t bits;
    int w, borrow;

    w = snprintf(head, sizeof head, "{'descr': '<f8', 'fortran_order': False, 'shape': (");
    used = (size_t)w;
    for (k = 0; k < ndim; k++) {
        w = snprintf(head + used, sizeof head - used, "%lu%s", (unsigned long)shape[k],
                ndim == 1 ? "," : k + 1 < ndim ? ", " : "");
        used += (size_t)w;
    }
    w = snprintf(head + used, sizeof head - used, "), }");
    used += (size_t)w;
    total = (10 + used + 1 + 63) / 64 * 64;
    /* chunk x nchunks is at most the sweep's numbers (RIGMAT_SWEEP_MAX_DOUBLES) */
    /* on a little-endian host one contiguous run is the file's data as it
     * stands: the file borrows it (kept by the caller until written) */
    borrow = host_little_endian() && nchunks == 1;
    buf = malloc(total + (borrow ? 0 : 8 * chunk * nchunks) + 1);
    if (buf == NULL)
        return -1;
    memcpy(buf, "\x93NUMPY\x01\x00", 8);
    buf[8] = (char)((total - 10) & 0xff);
    buf[9] = (char)((total - 10) >> 8);
    memcpy(buf + 10, head, used);
    memset(buf + 10 + used, ' ', total - 11 - used);
    buf[total - 1] = '\n';
    if (borrow) {
        if (add_file_bytes(env, name, buf, total) != 0)
            return -1;
        env->files.items[env->files.n - 1].tail = (const char *)data;
        env->files.items[env->files.n - 1].tail_len = 8 * chunk;
        return 0;
    }
    at = (unsigned char *)buf + total;
    if (host_little_endian()) {
        /* the common case: the host's bytes are the file's, a run at a time */
        for (k = 0; k < nchunks; k++, at += 8 * chunk)
            memcpy(at, data + k * stride, 8 * chunk);
    } else {
        for (k = 0; k < nchunks; k++)
            for (i = 0; i < chunk; i++) {
                memcpy(&bits, &data[k * stride + i], sizeof bits);
                for (j = 0; j < 8; j++)
                    *at++ = (unsigned char)(bits >> (8 * j));
            }
    }
    return add_file_bytes(env, name, buf, total + 8 * chunk * nchunks);
}

static FILE *add_file(struct cli_env *env, const char *name)
{
    struct cli_files *files = &env->files;
    struct cli_file *cf;

    if (files->n == sizeof files->items / sizeof files->items[0])
        return NULL;
    cf = &files->items[files->n];
    memset(cf, 0, sizeof *cf);
    cf->name = malloc(strlen(name) + 1);
    if (cf->name == NULL)
        return NULL;
    strcpy(cf->name, name);
    cf->f = open_memstream(&cf->buf, &cf->len);
    if (cf->f == NULL) {
        free(cf->name);
        return NULL;
    }
    files->n++;
    return cf->f;
}

static void json_axes(rigmat_json *j, const rigmat_sweep *s)
{
    size_t k;

    rigmat_json_key(j, "axes");
    rigmat_json_arr_open(j);
    for (k = 0; k < s->naxes; k++) {
        const rigmat_sweep_axis *a = &s->axes[k];
        rigmat_json_obj_open(j);
        rigmat_json_key(j, "vary");
        rigmat_json_str(j, a->arg);
        rigmat_json_key(j, "path");
        rigmat_json_str(j, a->path);
        rigmat_json_key(j, "unit");
        rigmat_json_str(j, a->unit);
        rigmat_json_key(j, "si_unit");
        rigmat_json_str(j, a->si_unit);
        rigmat_json_key(j, "from");
        rigmat_json_num(j, a->from);
        rigmat_json_key(j, "to");
        rigmat_json_num(j, a->to);
        rigmat_json_key(j, "count");
        rigmat_json_int(j, (long)a->count);
        rigmat_json_key(j, "values");
        rigmat_json_values(j, a->si, a->count);
        rigmat_json_obj_close(j);
    }
    rigmat_json_arr_close(j);
}

static rigmat_status write_npy(struct cli_env *env, const rigmat_model *m, const rigmat_sweep *s,
        const rigmat_sweep_opts *o, const double *grid, const double *okv)
{
    const rigmat_layout *L = &m->layout;
    rigmat_json j;
    FILE *f;
    size_t b, p, shape[3];
    char name[32];

    for (b = 0; b < RIGMAT_SB_COUNT; b++) {
        if (!s->has[b])
            continue;
        snprintf(name, sizeof name, "%s.npy", block_name[b]);
        shape[0] = s->npoints;
        shape[1] = s->rows[b];
        shape[2] = s->cols[b];
        /* every point's block, one array in the sweep's storage */
        if (add_npy(env, name, shape, is_vector(b) ? 2 : 3, s->data + s->off[b],
                    s->npoints * s->rows[b] * s->cols[b], 0, 1) != 0)
            return RIGMAT_ENOMEM;
    }
    shape[0] = s->npoints;
    shape[1] = s->naxes;
    if (add_npy(env, "grid.npy", shape, 2, grid, s->npoints * s->naxes, 0, 1) != 0 ||
            add_npy(env, "ok.npy", shape, 1, okv, s->npoints, 0, 1) != 0)
        return RIGMAT_ENOMEM;
    if ((f = add_file(env, "index.json")) == NULL)
        return RIGMAT_ENOMEM;
    rigmat_json_begin(&j, f);
    rigmat_json_key(&j, "rigmat");
    rigmat_json_str(&j, RIGMAT_VERSION);
    rigmat_json_key(&j, "model");
    rigmat_json_str(&j, m->name != NULL ? m->name : "");
    rigmat_json_key(&j, "kind");
    rigmat_json_str(&j, o->discretize ? "sweep-discrete" : "sweep");
    rigmat_json_key(&j, "order_hash");
    rigmat_json_str(&j, L->order_hash);
    rigmat_json_key(&j, "states");
    rigmat_json_signals(&j, L->states, L->nx, 0);
    rigmat_json_key(&j, "inputs");
    rigmat_json_signals(&j, L->inputs, L->nu, 1);
    rigmat_json_key(&j, "outputs");
    rigmat_json_signals(&j, L->outputs, L->ny, 0);
    if (o->discretize) {
        rigmat_json_key(&j, "period");
        rigmat_json_num(&j, o->dopts.period_s);
        rigmat_json_key(&j, "method");
        rigmat_json_str(&j, rigmat_method_name(o->dopts.method));
    }
    rigmat_json_key(&j, "grid");
    rigmat_json_obj_open(&j);
    json_axes(&j, s);
    rigmat_json_obj_close(&j);
    rigmat_json_key(&j, "points");
    rigmat_json_int(&j, (long)s->npoints);
    rigmat_json_key(&j, "arrays");
    rigmat_json_obj_open(&j);
    for (b = 0; b < RIGMAT_SB_COUNT; b++) {
        if (!s->has[b])
            continue;
        snprintf(name, sizeof name, "%s.npy", block_name[b]);
        rigmat_json_key(&j, name);
        rigmat_json_arr_open(&j);
        rigmat_json_int(&j, (long)s->npoints);
        rigmat_json_int(&j, (long)s->rows[b]);
        if (!is_vector(b))
            rigmat_json_int(&j, (long)s->cols[b]);
        rigmat_json_arr_close(&j);
    }
    rigmat_json_obj_close(&j);
    rigmat_json_key(&j, "failed");
    rigmat_json_arr_open(&j);
    for (p = 0; p < s->npoints; p++) {
        if (s->ok[p])
            continue;
        rigmat_json_obj_open(&j);
        rigmat_json_key(&j, "index");
        rigmat_json_int(&j, (long)p);
        rigmat_json_key(&j, "reason");
        rigmat_json_str(&j, s->reason[p]);
        rigmat_json_obj_close(&j);
    }
    rigmat_json_arr_close(&j);
    if (rigmat_json_end(&j) != RIGMAT_OK)
        return RIGMAT_ENUMERIC;
    env->files.folder = 1;
    snprintf(env->files.ext, sizeof env->files.ext, ".npy");
    return RIGMAT_OK;
}

/* ------------------------------------------------------------ the result */

static void add_block(rigmat_result *r, const rigmat_sweep *s, size_t p, int b,
        const rigmat_signal *rows, const rigmat_signal *cols)
{
    const size_t nr = s->rows[b], nc = s->cols[b];

    rigmat_result_key(r, block_name[b]);
    if (nr == 0 || nc == 0) {
        rigmat_result_matrix(r, NULL, nr, nc, rows, cols);
    } else {
        gsl_matrix_const_view v = gsl_matrix_const_view_array(rigmat_sweep_block(s, p, (size_t)b), nr, nc);
        rigmat_result_matrix(r, &v.matrix, nr, nc, rows, cols);
    }
}

static void add_vec(rigmat_result *r, const rigmat_sweep *s, size_t p, int b,
        const char *key, const rigmat_signal *names)
{
    rigmat_result_key(r, key);
    rigmat_result_values(r, rigmat_sweep_block(s, p, (size_t)b), s->rows[b], names);
}

/* Point p's sampled blocks (Ad, Bd, Gd, Cd, Dd, Ed); w names the
 * disturbance columns. */
static void add_sampled(rigmat_result *r, const rigmat_sweep *s, size_t p, const rigmat_layout *L,
        const rigmat_signal *w)
{
    add_block(r, s, p, RIGMAT_SB_AD, L->states, L->states);
    add_block(r, s, p, RIGMAT_SB_BD, L->states, L->inputs);
    add_block(r, s, p, RIGMAT_SB_GD, L->states, w);
    add_block(r, s, p, RIGMAT_SB_CD, L->outputs, L->states);
    add_block(r, s, p, RIGMAT_SB_DD, L->outputs, L->inputs);
    add_block(r, s, p, RIGMAT_SB_ED, L->outputs, w);
}

static rigmat_result *sweep_result(const rigmat_model *m, const rigmat_sweep *s,
        const rigmat_sweep_opts *o, const double *grid, const double *okv)
{
    const rigmat_layout *L = &m->layout;
    const rigmat_signal *w = L->inputs + L->nu_control;
    rigmat_result *r = rigmat_result_for_layout(o->discretize ? "sweep-discrete" : "sweep", m->name, L);
    size_t p, k;
    char key[48];

    if (r == NULL)
        return NULL;
    if (o->discretize) {
        rigmat_result_dim(r, "disturbance", w, s->nw);
        rigmat_result_key(r, "period");
        rigmat_result_number(r, o->dopts.period_s, "s");
        rigmat_result_key(r, "method");
        rigmat_result_string(r, rigmat_method_name(o->dopts.method));
    }
    rigmat_result_key(r, "grid");
    rigmat_result_object(r);
    rigmat_result_key(r, "axes");
    rigmat_result_array(r);
    for (k = 0; k < s->naxes; k++) {
        const rigmat_sweep_axis *a = &s->axes[k];
        rigmat_result_object(r);
        rigmat_result_key(r, "vary");
        rigmat_result_string(r, a->arg);
        rigmat_result_key(r, "path");
        rigmat_result_string(r, a->path);
        rigmat_result_key(r, "unit");
        rigmat_result_string(r, a->unit);
        rigmat_result_key(r, "si_unit");
        rigmat_result_string(r, a->si_unit);
        rigmat_result_key(r, "from");
        rigmat_result_number(r, a->from, NULL);
        rigmat_result_key(r, "to");
        rigmat_result_number(r, a->to, NULL);
        rigmat_result_key(r, "count");
        rigmat_result_integer(r, (long)a->count);
        rigmat_result_key(r, "values");
        rigmat_result_values(r, a->si, a->count, NULL);
        rigmat_result_compact(r);
        rigmat_result_close(r);
    }
    rigmat_result_close(r);
    rigmat_result_close(r);
    rigmat_result_show(r, RIGMAT_SHOW_JSON);
    rigmat_result_key(r, "failed");
    rigmat_result_integer(r, (long)s->nfailed);
    rigmat_result_show(r, RIGMAT_SHOW_JSON);
    /* the exports: the grid and ok as arrays, then the good points' matrices */
    rigmat_result_key(r, "grid_values");
    {
        gsl_matrix_const_view g = gsl_matrix_const_view_array(grid, s->npoints, s->naxes);
        rigmat_result_matrix(r, &g.matrix, s->npoints, s->naxes, NULL, NULL);
    }
    rigmat_result_export_name(r, "grid");
    rigmat_result_show(r, RIGMAT_SHOW_EXPORT);
    rigmat_result_key(r, "ok");
    rigmat_result_values(r, okv, s->npoints, NULL);
    rigmat_result_show(r, RIGMAT_SHOW_EXPORT);
    for (p = 0; p < s->npoints; p++) {
        if (!s->ok[p])
            continue;
        snprintf(key, sizeof key, "p%lu", (unsigned long)p);
        rigmat_result_key(r, key);
        rigmat_result_object(r);
        add_block(r, s, p, RIGMAT_SB_A, L->states, L->states);
        add_block(r, s, p, RIGMAT_SB_B, L->states, L->inputs);
        add_block(r, s, p, RIGMAT_SB_C, L->outputs, L->states);
        add_block(r, s, p, RIGMAT_SB_D, L->outputs, L->inputs);
        add_vec(r, s, p, RIGMAT_SB_X0, "x0", L->states);
        add_vec(r, s, p, RIGMAT_SB_U0, "u0", L->inputs);
        add_vec(r, s, p, RIGMAT_SB_Y0, "y0", L->outputs);
        if (o->discretize) {
            add_sampled(r, s, p, L, w);
        }
        rigmat_result_close(r);
        rigmat_result_show(r, RIGMAT_SHOW_EXPORT);
    }
    /* the JSON: one record per point */
    rigmat_result_key(r, "points");
    rigmat_result_array(r);
    for (p = 0; p < s->npoints; p++) {
        rigmat_result_object(r);
        rigmat_result_key(r, "index");
        rigmat_result_integer(r, (long)p);
        rigmat_result_key(r, "values");
        rigmat_result_values(r, grid + p * s->naxes, s->naxes, NULL);
        rigmat_result_compact(r);
        rigmat_result_key(r, "sets");
        rigmat_result_array(r);
        for (k = 0; k < s->naxes; k++)
            rigmat_result_string(r, s->axes[k].text[rigmat_sweep_index(s, p, k)]);
        rigmat_result_close(r);
        rigmat_result_compact(r);
        rigmat_result_key(r, "ok");
        rigmat_result_bool(r, s->ok[p]);
        rigmat_result_key(r, "reason");
        if (s->ok[p])
            rigmat_result_null(r);
        else
            rigmat_result_string(r, s->reason[p]);
        if (s->ok[p]) {
            add_block(r, s, p, RIGMAT_SB_A, L->states, L->states);
            add_block(r, s, p, RIGMAT_SB_B, L->states, L->inputs);
            add_block(r, s, p, RIGMAT_SB_C, L->outputs, L->states);
            add_block(r, s, p, RIGMAT_SB_D, L->outputs, L->inputs);
            rigmat_result_key(r, "operating_point");
            rigmat_result_object(r);
            add_vec(r, s, p, RIGMAT_SB_X0, "x", L->states);
            add_vec(r, s, p, RIGMAT_SB_U0, "u", L->inputs);
            add_vec(r, s, p, RIGMAT_SB_Y0, "y", L->outputs);
            rigmat_result_close(r);
            if (o->discretize) {
                add_sampled(r, s, p, L, w);
            }
        }
        rigmat_result_close(r);
    }
    rigmat_result_close(r);
    rigmat_result_show(r, RIGMAT_SHOW_JSON);
    return r;
}

/* ------------------------------------------------------------ the command */

struct sweep_args {
    struct cli_list vary;
    const char *rate, *method, *threads;
};

static rigmat_status parse_args(struct cli_env *env, const struct sweep_args *a,
        rigmat_sweep_opts *o)
{
    rigmat_status st;
    double v;
    char *end;
    unsigned long t;

    if (a->vary.count == 0) {
        fprintf(env->err, "rigmat sweep: missing --vary PATH=FROM:TO:COUNT\n");
        return RIGMAT_EUSAGE;
    }
    if (a->method != NULL && a->rate == NULL) {
        fprintf(env->err, "rigmat sweep: --method needs --rate\n");
        return RIGMAT_EUSAGE;
    }
    if (a->rate != NULL) {
        st = cli_quantity(env, "rate", a->rate, RIGMAT_Q_FREQUENCY, &v);
        if (st != RIGMAT_OK)
            return st;
        if (!(v > 0) || !isfinite(v)) {
            fprintf(env->err, "rigmat sweep: --rate must be positive\n");
            return RIGMAT_EUSAGE;
        }
        o->discretize = 1;
        o->dopts.period_s = 1.0 / v;
    }
    if (a->method != NULL && rigmat_method_parse(a->method, &o->dopts.method) != 0) {
        fprintf(env->err, "rigmat sweep: unknown method '%s'\n"
                "  hint: use zoh, foh, tustin, euler or backward-euler\n", a->method);
        return RIGMAT_EUSAGE;
    }
    o->threads = 1;
    if (a->threads != NULL) {
        t = strtoul(a->threads, &end, 10);
        if (a->threads[0] < '0' || a->threads[0] > '9' || *end != '\0' || t < 1 ||
                t > RIGMAT_SWEEP_MAX_THREADS) {
            fprintf(env->err, "rigmat sweep: --threads must be a whole number from 1 to %d\n",
                    RIGMAT_SWEEP_MAX_THREADS);
            return RIGMAT_EUSAGE;
        }
        o->threads = (unsigned)t;
    }
    return RIGMAT_OK;
}

rigmat_status cmd_sweep(int argc, char **argv, struct cli_env *env);
rigmat_status cmd_sweep(int argc, char **argv, struct cli_env *env)
{
    struct cli_common c;
    struct sweep_args a;
    const struct cli_opt opts[] = {
        { 0, "vary", CLI_OPT_LIST, &a.vary, "PATH=FROM:TO:COUNT",
          "a grid axis: a --set path or a coordinate or input name (repeatable)" },
        { 0, "rate", CLI_OPT_STRING, &a.rate, "FREQ", "also sample every point at FREQ (200Hz)" },
        { 0, "method", CLI_OPT_STRING, &a.method, "METHOD",
          "with --rate: zoh (default), foh, tustin, euler or backward-euler" },
        { 0, "threads", CLI_OPT_STRING, &a.threads, "N",
          "compute the points on N threads (default 1); the output is the same" },
        CLI_EXPORT_ROWS(&c),
        CLI_COMMON_ROWS(&c),
        CLI_OPT_END_ROW
    };
    rigmat_sweep_axis axes[RIGMAT_SWEEP_MAX_AXES];
    rigmat_sweep_opts so;
    rigmat_sweep s;
    struct progress pr;
    rigmat_model *m = NULL;
    rigmat_result *r = NULL;
    double *grid = NULL, *okv = NULL;
    const char *pos[1];
    size_t npos = 0, naxes = 0, k, first_bad = 0;
    rigmat_error e;
    rigmat_status st;

    memset(&c, 0, sizeof c);
    memset(&a, 0, sizeof a);
    memset(&e, 0, sizeof e);
    memset(&s, 0, sizeof s);
    memset(&so, 0, sizeof so);
    memset(axes, 0, sizeof axes);
    st = cli_parse(argc, argv, opts, env, pos, 1, &npos);
    if (st != RIGMAT_OK) {
        cli_usage(env->err, sweep_usage, opts);
        return st;
    }
    if (c.help) {
        cli_usage(stdout, sweep_usage, opts);
        return RIGMAT_OK;
    }
    if (npos != 1) {
        fprintf(env->err, "rigmat sweep: missing the model FILE\n");
        cli_usage(env->err, sweep_usage, opts);
        return RIGMAT_EUSAGE;
    }
    if (c.format == NULL)
        c.format = "json";
    if (cli_format(env, c.format, sweep_formats) < 0)
        return RIGMAT_EUSAGE;
    if (strcmp(c.format, "npy") == 0 && (env->output == NULL || strcmp(env->output, "-") == 0)) {
        fprintf(env->err, "rigmat sweep: the npy format writes one file per array\n"
                "  hint: give the folder to write them into with -o DIR\n");
        return RIGMAT_EUSAGE;
    }
    st = cli_export_options(env, &c);
    if (st != RIGMAT_OK)
        return st;
    so.dopts = rigmat_discretize_opts_default();
    st = parse_args(env, &a, &so);
    if (st != RIGMAT_OK) {
        cli_usage(env->err, sweep_usage, opts);
        return st;
    }
    if (a.vary.count > RIGMAT_SWEEP_MAX_AXES) {
        fprintf(env->err, "rigmat sweep: at most %d --vary axes\n", RIGMAT_SWEEP_MAX_AXES);
        return RIGMAT_EUSAGE;
    }
    st = cli_load_model(env, pos[0], &c, &m);
    if (st != RIGMAT_OK)
        return st;
    for (naxes = 0; naxes < a.vary.count; naxes++) {
        st = rigmat_sweep_axis_parse(a.vary.items[naxes], m, &axes[naxes], &e);
        if (st != RIGMAT_OK) {
            naxes++;
            goto report;
        }
    }
    so.file = pos[0];
    so.sets = c.sets.items;
    so.nsets = c.sets.count;
    so.opt = &env->opt;
    memset(&pr, 0, sizeof pr);
    pr.err = env->err;
    clock_gettime(CLOCK_MONOTONIC, &pr.start);
    if (isatty(fileno(env->err))) {
        so.progress = progress_cb;
        so.progress_ctx = &pr;
    }
    st = rigmat_sweep_run(m, axes, naxes, &so, &s, &e);
    if (pr.shown)
        fputc('\n', env->err);
    if (st != RIGMAT_OK)
        goto report;
    if (s.nfailed > 0) {
        for (first_bad = 0; first_bad < s.npoints && s.ok[first_bad]; first_bad++)
            ;
        if (s.nfailed == s.npoints) {
            st = RIGMAT_FAIL(&e, RIGMAT_ENUMERIC, "all %lu points failed; point 0: %s",
                    (unsigned long)s.npoints, s.reason[0]);
            rigmat_error_hint(&e, "check the ranges of --vary against the model");
            goto report;
        }
        fprintf(env->err, "rigmat sweep: warning: %lu of %lu points failed (the first, point "
                "%lu: %s); they are marked ok = false\n", (unsigned long)s.nfailed,
                (unsigned long)s.npoints, (unsigned long)first_bad, s.reason[first_bad]);
    }
    grid = malloc((s.npoints * s.naxes + 1) * sizeof *grid);
    okv = malloc((s.npoints + 1) * sizeof *okv);
    if (grid == NULL || okv == NULL) {
        st = RIGMAT_FAIL(&e, RIGMAT_ENOMEM, "out of memory");
        goto report;
    }
    {
        size_t p;
        for (p = 0; p < s.npoints; p++) {
            okv[p] = s.ok[p] ? 1.0 : 0.0;
            for (k = 0; k < s.naxes; k++)
                grid[p * s.naxes + k] = s.axes[k].si[rigmat_sweep_index(&s, p, k)];
        }
    }
    if (strcmp(c.format, "npy") == 0) {
        st = write_npy(env, m, &s, &so, grid, okv);
        if (st != RIGMAT_OK) {
            cli_files_release(&env->files);
            st = RIGMAT_FAIL(&e, st, "cannot build the npy files: %s",
                    st == RIGMAT_ENOMEM ? "out of memory" : "a number is not finite");
            goto report;
        }
        /* the files may borrow these (add_npy): they live until written */
        env->files.keep[0] = s.data;
        env->files.keep[1] = grid;
        env->files.keep[2] = okv;
        s.data = NULL;
        grid = okv = NULL;
        goto done;
    }
    r = sweep_result(m, &s, &so, grid, okv);
    if (r == NULL) {
        st = RIGMAT_FAIL(&e, RIGMAT_ENOMEM, "out of memory");
        goto report;
    }
    st = cli_emit(env, r, &c, pos[0]);
    goto done;
report:
    st = cli_report(env, &e);
done:
    rigmat_result_free(r);
    free(grid);
    free(okv);
    rigmat_sweep_release(&s);
    for (k = 0; k < naxes; k++)
        rigmat_sweep_axis_release(&axes[k]);
    rigmat_model_free(m);
    return st;
}
