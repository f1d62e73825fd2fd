/* fuzz_pipeline.c - load, linearize, discretize at 100 Hz, build the
 * noise model and analyse the modes, on the input as a model file.
 *
 * The input is written to model.yaml in a private folder under /tmp and
 * loaded with the default options ($RIGMAT_CATALOG for parts, as in
 * fuzz_load.c).  A model that loads goes through rigmat_linearize, then
 * rigmat_discretize (ZOH, T = 10 ms), rigmat_noise_build and
 * rigmat_sampling_advice.  Properties checked (src/util/rigmat_internal.h,
 * src/sample/discretize.h, src/sample/noise.h, and README.md, "JSON output": a
 * non-finite result is an error, never printed):
 *   - every status is one its header documents;
 *   - a model linearized has the layout's sizes and finite A, B, C, D and
 *     operating point;
 *   - a sampled model has finite Ad, Bd, Gd, Cd, Dd, Ed;
 *   - Qd and Rd are finite and symmetric with a non-negative diagonal;
 *   - the linear model renders in every format (src/emit/result.h) without
 *     failing, whatever the names in it, and each output is not empty;
 *   - everything is freed (LeakSanitizer).
 * Built only when src/mech/linearize.h, src/sample/discretize.h and src/sample/noise.h exist;
 * before that it is the loader alone.
 *
 * Most mutations of a whole model break its structure, so few reach the
 * numerics.  A second form keeps the structure and mutates values: an
 * input whose first line is `#base NAME` loads NAME from the examples
 * folder ($RIGMAT_FUZZ_EXAMPLES, default examples/) and applies each later
 * line as a --set override (`bodies.chassis.mass=1e-300kg`).  A line
 * `#delay D` there sets the input delay of the sampled model to D samples
 * (strtod: huge, negative, NaN and fractional delays reach the checks of
 * rigmat_discretize); the harness lowers max_states to 64 so that an
 * accepted delay stays fast under the sanitizers, and the refusal above it
 * is the same code as above the default limit.
 */
#include "fuzz.h"
#include "rigmat_internal.h"

#include <gsl/gsl_errno.h>
#include <math.h>
#include <unistd.h>

#if defined(__has_include)
#if __has_include("linearize.h") && __has_include("discretize.h") && __has_include("noise.h")
#define HAVE_PIPELINE 1
#include "discretize.h"
#include "noise.h"
#include "result.h"
#endif
#if __has_include("modes.h")
#define HAVE_MODES 1
#include "modes.h"
#endif
#endif

#define MAX_SETS 16

static int setup(void)
{
    gsl_set_error_handler_off();
    return fuzz_model_setup();
}

#ifdef HAVE_PIPELINE
static void require_finite_m(const gsl_matrix *a, size_t rows, size_t cols, const char *what)
{
    size_t i, j;

    if (rows == 0 || cols == 0)
        return;
    FUZZ_REQUIRE(a != NULL, "%s is NULL for %zu x %zu", what, rows, cols);
    FUZZ_REQUIRE(a->size1 == rows && a->size2 == cols, "%s is %zu x %zu, want %zu x %zu", what,
                 a->size1, a->size2, rows, cols);
    for (i = 0; i < rows; i++)
        for (j = 0; j < cols; j++)
            FUZZ_REQUIRE(isfinite(gsl_matrix_get(a, i, j)), "%s[%zu][%zu] = %g", what, i, j,
                         gsl_matrix_get(a, i, j));
}

static void require_finite_v(const gsl_vector *v, size_t n, const char *what)
{
    size_t i;

    if (n == 0 || v == NULL)
        return;
    FUZZ_REQUIRE(v->size == n, "%s has %zu entries, want %zu", what, v->size, n);
    for (i = 0; i < n; i++)
        FUZZ_REQUIRE(isfinite(gsl_vector_get(v, i)), "%s[%zu] = %g", what, i, gsl_vector_get(v, i));
}

static void require_covariance(const gsl_matrix *a, size_t n, const char *what)
{
    size_t i, j;

    require_finite_m(a, n, n, what);
    for (i = 0; i < n; i++) {
        FUZZ_REQUIRE(gsl_matrix_get(a, i, i) >= 0.0, "%s[%zu][%zu] = %g < 0", what, i, i,
                     gsl_matrix_get(a, i, i));
        for (j = 0; j < i; j++)
            FUZZ_REQUIRE(gsl_matrix_get(a, i, j) == gsl_matrix_get(a, j, i),
                         "%s not symmetric at %zu, %zu", what, i, j);
    }
}

static void sample(const rigmat_lti *s, double delay)
{
    rigmat_discretize_opts o = rigmat_discretize_opts_default();
    rigmat_discretize_ws *w = rigmat_discretize_ws_alloc(s->nx, s->nu, s->ny);
    rigmat_noise_opts no = rigmat_noise_opts_default();
    rigmat_noise_ws *nw = NULL;
    rigmat_noise *noise = NULL;
    rigmat_dlti *d = NULL;
    rigmat_sampling_limits lim = rigmat_sampling_limits_default();
    rigmat_advice advice[8];
    size_t count = 0;
    rigmat_error e;
    rigmat_status st;

    if (w == NULL)
        return;
    memset(&e, 0, sizeof e);
    o.period_s = 0.01; /* 100 Hz */
    o.delay_samples = delay;
    o.max_states = 64;
    st = rigmat_discretize(s, &o, w, &d, &e);
    FUZZ_REQUIRE(st == RIGMAT_OK || st == RIGMAT_EUSAGE || st == RIGMAT_ENUMERIC ||
                         st == RIGMAT_ENOMEM,
                 "discretize status %d", (int)st);
    if (st != RIGMAT_OK) {
        FUZZ_REQUIRE(e.message[0] != '\0', "discretize failed without a message");
        goto done;
    }
    FUZZ_REQUIRE(d != NULL, "discretize OK without a model");
    require_finite_m(d->Ad, d->nx, d->nx, "Ad");
    require_finite_m(d->Bd, d->nx, d->nu, "Bd");
    require_finite_m(d->Gd, d->nx, d->nw, "Gd");
    require_finite_m(d->Cd, d->ny, d->nx, "Cd");
    require_finite_m(d->Dd, d->ny, d->nu, "Dd");
    require_finite_m(d->Ed, d->ny, d->nw, "Ed");

    nw = rigmat_noise_ws_alloc(d->nx, d->nw);
    if (nw == NULL)
        goto done;
    st = rigmat_noise_build(s, d, &no, nw, &noise, &e);
    FUZZ_REQUIRE(st == RIGMAT_OK || st == RIGMAT_EUSAGE || st == RIGMAT_ENUMERIC ||
                         st == RIGMAT_ENOMEM,
                 "noise status %d", (int)st);
    if (st == RIGMAT_OK) {
        FUZZ_REQUIRE(noise != NULL, "noise OK without a model");
        require_covariance(noise->Qd, noise->nx, "Qd");
        require_covariance(noise->Rd, noise->ny, "Rd");
        if (noise->S != NULL)
            require_finite_m(noise->S, noise->nx, noise->ny, "S");
    }
    st = rigmat_sampling_advice(s, &o, &lim, advice, 8, &count, &e);
    FUZZ_REQUIRE(st == RIGMAT_OK || st == RIGMAT_ENUMERIC || st == RIGMAT_ENOMEM,
                 "advice status %d", (int)st);
done:
    rigmat_noise_free(noise);
    rigmat_noise_ws_free(nw);
    rigmat_dlti_free(d);
    rigmat_discretize_ws_free(w);
}

#ifdef HAVE_MODES
/* The modes of a linearized model (src/study/modes.h): a documented
 * status; finite eigenvalues, shares in [0, 1] summing to 1, finite zeros;
 * a DC gain that is finite except where a pole sits at 0; a summary. */
static void study(const rigmat_lti *s)
{
    rigmat_modes *md = NULL;
    rigmat_error e;
    rigmat_status st;
    char line[512];
    size_t k, i;

    memset(&e, 0, sizeof e);
    st = rigmat_modes_compute(s, 0.01, NULL, &md, &e);
    FUZZ_REQUIRE(st == RIGMAT_OK || st == RIGMAT_ENUMERIC || st == RIGMAT_ENOMEM, "modes status %d",
                 (int)st);
    if (st != RIGMAT_OK) {
        FUZZ_REQUIRE(e.message[0] != '\0', "modes failed without a message");
        return;
    }
    for (k = 0; k < md->nx; k++) {
        const rigmat_mode *mo = &md->modes[k];
        double sum = 0.0;

        FUZZ_REQUIRE(isfinite(mo->s_re) && isfinite(mo->s_im), "mode %zu not finite", k);
        FUZZ_REQUIRE(mo->stability == RIGMAT_STABLE || mo->stability == RIGMAT_MARGINAL ||
                             mo->stability == RIGMAT_UNSTABLE,
                     "mode %zu stability %d", k, (int)mo->stability);
        for (i = 0; i < md->nx; i++) {
            FUZZ_REQUIRE(mo->share[i] >= 0.0 && mo->share[i] <= 1.0, "share %g", mo->share[i]);
            sum += mo->share[i];
        }
        FUZZ_REQUIRE(fabs(sum - 1.0) < 1e-9, "mode %zu shares sum to %.17g", k, sum);
    }
    for (k = 0; k < md->nu * md->ny; k++)
        for (i = 0; i < md->zeros[k].count; i++)
            FUZZ_REQUIRE(isfinite(md->zeros[k].re[i]) && isfinite(md->zeros[k].im[i]),
                         "channel %zu zero %zu not finite", k, i);
    if (md->dc_gain != NULL)
        for (k = 0; k < md->ny; k++)
            for (i = 0; i < md->nu; i++)
                FUZZ_REQUIRE(isfinite(gsl_matrix_get(md->dc_gain, k, i)) || md->zero_poles > 0,
                             "dc_gain[%zu][%zu] = %g without a pole at 0", k, i,
                             gsl_matrix_get(md->dc_gain, k, i));
    rigmat_modes_summary(md, line, sizeof line);
    FUZZ_REQUIRE(strlen(line) < sizeof line, "summary not terminated");
    rigmat_modes_free(md);
}
#endif

/* A folder format's files: memory streams, freed after the run. */
struct fuzz_sink {
    FILE *f[32];
    char *buf[32];
    size_t len[32], n;
};

static FILE *fuzz_open(void *ctx, const char *name)
{
    struct fuzz_sink *k = ctx;

    (void)name;
    if (k->n == 32)
        return NULL;
    k->f[k->n] = open_memstream(&k->buf[k->n], &k->len[k->n]);
    return k->f[k->n] != NULL ? k->f[k->n++] : NULL;
}

static void export_all(const rigmat_model *m, const rigmat_lti *s)
{
    const rigmat_layout *L = &m->layout;
    rigmat_result *r = rigmat_result_alloc("continuous");
    size_t n, i, k;
    const rigmat_format_info *t = rigmat_format_table(&n);

    if (r == NULL)
        return;
    rigmat_result_head(r, m->name, L->order_hash, L->states, L->nx, L->inputs, L->nu,
            L->outputs, L->ny);
    rigmat_result_dim(r, "state", L->states, L->nx);
    rigmat_result_dim(r, "input", L->inputs, L->nu);
    rigmat_result_dim(r, "output", L->outputs, L->ny);
    rigmat_result_key(r, "A");
    rigmat_result_matrix(r, s->A, s->nx, s->nx, L->states, L->states);
    rigmat_result_key(r, "B");
    rigmat_result_matrix(r, s->B, s->nx, s->nu, L->states, L->inputs);
    rigmat_result_key(r, "C");
    rigmat_result_matrix(r, s->C, s->ny, s->nx, L->outputs, L->states);
    rigmat_result_key(r, "D");
    rigmat_result_matrix(r, s->D, s->ny, s->nu, L->outputs, L->inputs);
    rigmat_result_key(r, "x0");
    rigmat_result_vector(r, s->x0, s->nx, L->states);
    rigmat_result_key(r, "residual");
    rigmat_result_number(r, s->residual, NULL);
    for (i = 0; i < n; i++) {
        struct fuzz_sink sink;
        rigmat_emit_sink es = { fuzz_open, &sink };
        rigmat_emit_opts eo = { NULL, (int)(i & 1), m->file, NULL };
        rigmat_error e;
        char *buf = NULL;
        size_t len = 0;
        FILE *f = open_memstream(&buf, &len);
        rigmat_status st;

        memset(&sink, 0, sizeof sink);
        memset(&e, 0, sizeof e);
        if (f == NULL)
            break;
        st = rigmat_result_write(r, t[i].format, &eo, f, &es, &e);
        fclose(f);
        FUZZ_REQUIRE(st == RIGMAT_OK || st == RIGMAT_ENOMEM ||
                             (st == RIGMAT_ENUMERIC && t[i].format == RIGMAT_FORMAT_C),
                     "%s export: status %d (%s)", t[i].word, (int)st, e.message);
        FUZZ_REQUIRE(st != RIGMAT_OK || t[i].folder || len > 0, "%s export is empty",
                     t[i].word);
        for (k = 0; k < sink.n; k++) {
            fclose(sink.f[k]);
            free(sink.buf[k]);
        }
        free(buf);
    }
    rigmat_result_free(r);
}

static void linearize(const rigmat_model *m, const rigmat_options *opt, double delay)
{
    rigmat_lti *s = NULL;
    rigmat_diags warnings;
    rigmat_error e;
    rigmat_status st;

    memset(&e, 0, sizeof e);
    rigmat_diags_init(&warnings);
    st = rigmat_linearize(m, opt, &s, &warnings, &e);
    FUZZ_REQUIRE(st == RIGMAT_OK || st == RIGMAT_EMODEL || st == RIGMAT_ENUMERIC ||
                         st == RIGMAT_ENOMEM,
                 "linearize status %d", (int)st);
    if (st == RIGMAT_OK) {
        FUZZ_REQUIRE(s != NULL, "linearize OK without a model");
        FUZZ_REQUIRE(s->nx == m->layout.nx && s->nu == m->layout.nu && s->ny == m->layout.ny,
                     "sizes %zu %zu %zu, layout %zu %zu %zu", s->nx, s->nu, s->ny, m->layout.nx,
                     m->layout.nu, m->layout.ny);
        require_finite_m(s->A, s->nx, s->nx, "A");
        require_finite_m(s->B, s->nx, s->nu, "B");
        require_finite_m(s->C, s->ny, s->nx, "C");
        require_finite_m(s->D, s->ny, s->nu, "D");
        require_finite_v(s->x0, s->nx, "x0");
        require_finite_v(s->u0, s->nu, "u0");
        require_finite_v(s->y0, s->ny, "y0");
        require_finite_v(s->f0, s->nx, "f0");
        export_all(m, s);
        if (s->nx > 0)
            sample(s, delay);
#ifdef HAVE_MODES
        study(s);
#endif
    } else {
        FUZZ_REQUIRE(e.message[0] != '\0', "linearize failed without a message");
    }
    rigmat_lti_free(s);
    rigmat_diags_release(&warnings);
}
#endif

/* The `#base NAME` form: the example's path (malloc'd), the override
 * lines, cut in place in text, and the `#delay D` line's D (0 without
 * one); NULL when the input is a plain model. */
static char *take_base(char *text, char **sets, size_t *nsets, double *delay)
{
    const char *dir = getenv("RIGMAT_FUZZ_EXAMPLES");
    char *name, *p, *path;
    size_t n;

    *nsets = 0;
    *delay = 0.0;
    if (strncmp(text, "#base ", 6) != 0)
        return NULL;
    name = text + 6;
    p = strchr(name, '\n');
    if (p != NULL)
        *p++ = '\0';
    if (name[0] == '\0' || strchr(name, '/') != NULL || strcmp(name, "..") == 0)
        return NULL;
    while (p != NULL && *p != '\0' && *nsets < MAX_SETS) {
        char *end = strchr(p, '\n');
        if (end != NULL)
            *end++ = '\0';
        if (strncmp(p, "#delay ", 7) == 0)
            *delay = strtod(p + 7, NULL);
        else if (*p != '\0')
            sets[(*nsets)++] = p;
        p = end;
    }
    if (dir == NULL)
        dir = "examples";
    n = strlen(dir) + strlen(name) + 2;
    path = malloc(n);
    if (path != NULL)
        snprintf(path, n, "%s/%s", dir, name);
    return path;
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    rigmat_options opt;
    rigmat_diags d;
    rigmat_model *m = NULL;
    rigmat_status st;
    char *text, *base;
    char *sets[MAX_SETS];
    size_t nsets = 0;
    double delay = 0.0;

    if (setup() != 0)
        abort();
    text = fuzz_text(data, size);
    if (text == NULL)
        return 0;
    base = take_base(text, sets, &nsets, &delay);
    if (base == NULL && fuzz_model_write(data, size) != 0)
        abort();
    opt = rigmat_options_default();
    opt.catalog_env = getenv("RIGMAT_CATALOG");
    rigmat_diags_init(&d);
    st = rigmat_model_load(base != NULL ? base : fuzz_model_path(), (const char *const *)sets,
                           nsets, &opt, &m, &d);
    if (st == RIGMAT_OK) {
        FUZZ_REQUIRE(m != NULL, "load OK without a model");
#ifdef HAVE_PIPELINE
        st = rigmat_model_check_equations(m, &d);
        /* ENUMERIC: a closed loop that cannot assemble, or sits at a dead
         * centre, at the operating point (src/mech/closure.h) */
        FUZZ_REQUIRE(st == RIGMAT_OK || st == RIGMAT_EMODEL || st == RIGMAT_ENUMERIC ||
                             st == RIGMAT_ENOMEM,
                     "check_equations status %d", (int)st);
        if (st == RIGMAT_EMODEL || st == RIGMAT_ENUMERIC)
            FUZZ_REQUIRE(d.errors > 0, "equations refused without an error");
        if (st != RIGMAT_ENUMERIC) /* an unassembled loop is not a model to linearize */
            linearize(m, &opt, delay);
#endif
        rigmat_model_free(m);
    }
    rigmat_diags_release(&d);
    free(base);
    free(text);
    return 0;
}
