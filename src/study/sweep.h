/* sweep.h - linear models over a grid of operating points or parameters
 * (stage: study).
 *
 * A sweep varies one or more model values (axes) over a full grid.  Each
 * axis is a --set path (bodies.chassis.mass) or an operating-point name
 * (tilt: operating_point.coordinates.tilt; drive:
 * operating_point.inputs.drive), with FROM:TO:COUNT values in one unit.
 * At every point the model is loaded from its file with the common --set
 * overrides plus one override per axis, written "PATH=%.17g<unit>", so a
 * point gives exactly the numbers of a single `rigmat linearize --set ...`
 * (or `discretize`) run with those overrides: the same text goes through
 * the same loader.  Then: trim when operating_point.solve names unknowns
 * (inside rigmat_linearize), linearize, and discretize when a rate is
 * given.
 *
 * Fast path: when every axis is an operating-point setting (a coordinate,
 * rate or input), the model has no closure and every axis value is one the
 * loader accepts, each thread loads the model once (with a first value per
 * axis, so every varied setting exists) and then, per point, writes the
 * axis values into the settings, as SI values read from the same override
 * text by the loader's own code (rigmat_load_op_value), and runs what reads
 * them: the loader's input-limit check (the same function and message),
 * the equation checks that read the point (a `states` list), the trim and
 * linearization (a reusable rigmat_linearizer) and the sampling (a
 * refilled result).  The numbers and reasons equal the reload's byte for
 * byte (tests/check_sweep.c on every example); rigmat_sweep_opts.reload
 * forces the reload path.
 *
 * Failed points: the load refuses the value, the trim does not converge,
 * a number is not finite, the layout (order hash) differs from the base
 * model's, or a duty input lies beyond +-1 (the only input limit the
 * schema has so far).  They are marked (ok = 0, a reason) and the sweep
 * goes on.
 *
 * Threads: points are shared out to pthreads, each with its own
 * discretization workspace; a loaded model is read-only and each point has
 * its own.  Every point writes only its own slot, so the numbers do not
 * depend on the thread count.
 *
 * Reload path (any other axis, or a model with closures): the file is
 * read and parsed, and its parts merged, once (rigmat_load_base_new);
 * each point loads from a copy of that tree with its overrides
 * (rigmat_model_load_from), which gives rigmat_model_load's model and
 * diagnostics (tests/check_sweep.c on every example, with
 * rigmat_sweep_opts.full_reload reading the file at every point).  A file
 * whose base cannot be made cleanly is read at every point.
 *
 * Cost: per point, the fast path's linearization and (optionally) matrix
 * exponential; the reload path adds the overrides, the schema and the
 * layout of a load.  Memory: npoints x (the point's numbers) doubles,
 * capped by RIGMAT_SWEEP_MAX_POINTS and RIGMAT_SWEEP_MAX_DOUBLES.
 */
#ifndef RIGMAT_SWEEP_H
#define RIGMAT_SWEEP_H

#include "rigmat_internal.h"
#include "discretize.h"

#define RIGMAT_SWEEP_MAX_AXES 8
#define RIGMAT_SWEEP_MAX_POINTS 1000000UL  /* grid points of one sweep */
#define RIGMAT_SWEEP_MAX_DOUBLES 268435456UL /* 2 GiB of stored results */
#define RIGMAT_SWEEP_MAX_THREADS 256

typedef struct rigmat_sweep_axis {
    char *arg;      /* as given: "tilt=-10deg:10deg:5" (owned) */
    char *path;     /* the --set path the values go to (owned) */
    char unit[32];  /* the unit of FROM and TO as written; "" = SI */
    char si_unit[32]; /* the SI symbol of the values in `si` ("rad"); "" when FROM
                       * and TO are bare numbers (read in the field's SI unit) */
    double from, to; /* in unit */
    size_t count;
    double *si;     /* count values in SI (owned) */
    char **text;    /* count override texts "PATH=VALUE" (owned) */
} rigmat_sweep_axis;

/* Parse "PATH=FROM:TO:COUNT" into a (caller-owned struct; release with
 * rigmat_sweep_axis_release whatever the status).  A PATH without a dot
 * names a coordinate or an input of base (the loaded model at the common
 * overrides).  RIGMAT_EUSAGE with err filled on a malformed axis. */
rigmat_status rigmat_sweep_axis_parse(const char *text, const rigmat_model *base,
        rigmat_sweep_axis *a, rigmat_error *err);
void rigmat_sweep_axis_release(rigmat_sweep_axis *a);

typedef struct rigmat_sweep_opts {
    const char *file;            /* the model file */
    const char *const *sets;     /* common overrides */
    size_t nsets;
    const rigmat_options *opt;
    int discretize;              /* 1: sample every point with dopts */
    rigmat_discretize_opts dopts;
    unsigned threads;            /* >= 1 */
    int reload;                  /* 1: reload the model at every point even where the fast
                                  * path applies (to check the two agree) */
    int full_reload;             /* 1: a reloaded point reads and parses the file again,
                                  * instead of copying the tree kept after the parts are
                                  * merged (to check the two agree) */
    /* called (under a lock, from any thread) after each point; may be NULL */
    void (*progress)(void *ctx, size_t done, size_t total);
    void *progress_ctx;
} rigmat_sweep_opts;

/* The blocks of a point's numbers, in this order; each row-major. */
enum rigmat_sweep_block {
    RIGMAT_SB_A, RIGMAT_SB_B, RIGMAT_SB_C, RIGMAT_SB_D,
    RIGMAT_SB_X0, RIGMAT_SB_U0, RIGMAT_SB_Y0,
    RIGMAT_SB_AD, RIGMAT_SB_BD, RIGMAT_SB_GD, RIGMAT_SB_CD, RIGMAT_SB_DD, RIGMAT_SB_ED,
    RIGMAT_SB_COUNT
};

typedef struct rigmat_sweep {
    size_t naxes;
    rigmat_sweep_axis *axes;  /* borrowed from the caller */
    size_t npoints;           /* the product of the counts; last axis fastest */
    size_t nx, nu, nuc, nw, ny;
    size_t rows[RIGMAT_SB_COUNT], cols[RIGMAT_SB_COUNT];
    size_t off[RIGMAT_SB_COUNT]; /* where block b's array starts in data */
    int has[RIGMAT_SB_COUNT]; /* the block is part of this sweep */
    size_t stride;            /* doubles per point (all blocks) */
    double *data;             /* npoints x stride, block by block: block b of every point
                               * in point order (an npoints x rows x cols array, as an
                               * npy file holds it), then the next block; NaN at failed
                               * points */
    unsigned char *ok;        /* npoints */
    char (*reason)[256];      /* npoints; "" at good points */
    size_t nfailed;
    int fast;                 /* the points took the fast path (see above) */
} rigmat_sweep;

/* The number of grid points of the axes; 0 when it exceeds
 * RIGMAT_SWEEP_MAX_POINTS (or overflows). */
size_t rigmat_sweep_points(const rigmat_sweep_axis *axes, size_t naxes);

/* Point p's block b (rows[b] x cols[b], row-major) in s->data. */
double *rigmat_sweep_block(const rigmat_sweep *s, size_t p, size_t b);

/* The grid index of axis k at point p. */
size_t rigmat_sweep_index(const rigmat_sweep *s, size_t p, size_t k);

/* Run the sweep over axes for base (loaded from o->file with o->sets; its
 * layout sizes the results).  Fills *s (caller-owned; rigmat_sweep_release
 * whatever the status).  RIGMAT_EUSAGE when there are too many points or
 * numbers, RIGMAT_ENOMEM, RIGMAT_EINTERNAL when a thread cannot start.
 * Failed points are not an error here: see s->ok and s->nfailed. */
rigmat_status rigmat_sweep_run(const rigmat_model *base, rigmat_sweep_axis *axes, size_t naxes,
        const rigmat_sweep_opts *o, rigmat_sweep *s, rigmat_error *err);
void rigmat_sweep_release(rigmat_sweep *s);

#endif /* RIGMAT_SWEEP_H */
