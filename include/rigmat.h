/* rigmat.h - the public API of librigmat.
 *
 * rigmat turns a YAML description of a planar mechanism (bodies, joints,
 * springs, dampers, DC motors with transmissions, forces, sensors, an
 * operating point) into the linear state-space model around that point,
 * its sampled form with a discrete noise model, and analyses of both.
 * README.md describes the model file; examples/embed.c is a complete
 * program using this header.
 *
 * THE STEPS
 *   rigmat_source_new      what to load: a file, overrides, a catalog folder
 *   rigmat_source_load     -> rigmat_model      (validated, equations checked)
 *   rigmat_model_trim      -> rigmat_steady     (a steady state over operating_point.solve)
 *   rigmat_model_linearize -> rigmat_linear     (x' = A x + B u, y = C x + D u)
 *   rigmat_linear_discretize -> rigmat_sampled  (Ad ... Ed, Qd, Rd at a rate)
 *   rigmat_linear_analyze  -> rigmat_analysis   (eigenvalues and modes)
 *   rigmat_linear_simulate -> rigmat_response   (a free response from an offset)
 *   rigmat_linear_export, rigmat_sampled_export: the result to a FILE * in
 *   any format of `rigmat --format` (text, json, csv, c, numpy, latex, and
 *   the folder format mtx through a callback).
 *
 * CONVENTIONS
 *   - Types are opaque: create them with the function that returns them,
 *     read them with accessors, free them with their _free function.  Every
 *     _free accepts NULL.
 *   - Every function that can fail returns a rigmat_status and, when the
 *     caller passes a rigmat_diags, appends what went wrong there (with the
 *     place in the model file when there is one, and a hint).  Nothing is
 *     ever printed: the library writes only to streams the caller passes.
 *     diags may be NULL where a function takes one; the status still says
 *     what happened.
 *   - An output pointer (*out) is set only on RIGMAT_OK; otherwise it is
 *     set to NULL.
 *   - Ownership: a handle returned through *out belongs to the caller.  Two
 *     handles borrow the one they were made from: a rigmat_linear its
 *     rigmat_model, a rigmat_sampled its rigmat_linear (and so the model).
 *     Free the borrower first (the lender must outlive it).  A
 *     rigmat_steady, rigmat_analysis or rigmat_response copies what it
 *     needs and borrows nothing.  Strings and arrays an accessor returns
 *     belong to the handle they came from and are valid until it is freed.
 *   - Build with `pkg-config --cflags --libs rigmat`: the library is static
 *     and the .pc file lists what it needs (GSL, the BLAS, libyaml).
 *   - Numbers are SI (kg, m, s, A, rad, Hz for rates); every matrix is
 *     row-major with rows * cols doubles (rigmat_matrix_view).
 *   - GSL's default error handler aborts the process.  Call
 *     gsl_set_error_handler_off() once, before any other rigmat call and
 *     before starting threads (the handler is process-wide): rigmat checks
 *     every GSL status itself.
 *
 * THREADS
 *   librigmat has no global state (no writable static data: `make
 *   check-symbols` verifies it), reads no environment variable and never
 *   changes the locale.  Separate handles may be used on separate threads
 *   at the same time.  A handle that no thread modifies (every handle once
 *   created; a rigmat_diags or rigmat_source is modified by the functions
 *   that fill it) may be read from several threads; freeing a handle while
 *   another thread uses it or a borrower of it is wrong.  With OpenBLAS as
 *   GSL's BLAS, use a build made for threaded callers (Debian's
 *   libopenblas0-pthread is).
 *
 * Copyright (C) 2026 the rigmat authors.  GPL-3.0-or-later.
 */
#ifndef RIGMAT_H
#define RIGMAT_H

#include <stddef.h>
#include <stdio.h>

#ifdef __cplusplus
extern "C" {
#endif

/* --------------------------------------------------------------- version */

#define RIGMAT_VERSION "0.1.0"
#define RIGMAT_VERSION_MAJOR 0
#define RIGMAT_VERSION_MINOR 1
#define RIGMAT_VERSION_PATCH 0
#define RIGMAT_SCHEMA 1 /* the model file schema this library reads */

/* The version of the library linked in ("0.1.0"), to compare with the
 * RIGMAT_VERSION a program was compiled with.  A static string. */
const char *rigmat_version(void);

/* ---------------------------------------------------------------- status */

/* What a function did.  The command line exits with rigmat_exit_code of
 * the status (README.md, "Exit codes" under the command line). */
typedef enum rigmat_status {
    RIGMAT_OK = 0,
    RIGMAT_EMODEL,   /* the model file is wrong (exit 1) */
    RIGMAT_EUSAGE,   /* the caller or command line is wrong (exit 2) */
    RIGMAT_ENUMERIC, /* a computation failed: singular, not converged, NaN (exit 3) */
    RIGMAT_EIO,      /* reading or writing failed (exit 4) */
    RIGMAT_ENOMEM,   /* out of memory (exit 4) */
    RIGMAT_EINTERNAL /* a broken invariant: a bug in rigmat (exit 5) */
} rigmat_status;

/* "ok", "bad model", "bad usage", "numerical failure", "input/output
 * error", "out of memory", "internal error"; a static string ("unknown
 * status" for a value outside the enum). */
const char *rigmat_status_name(rigmat_status st);
/* The exit code of the command line for st: 0, 1, 2, 3, 4, 4, 5; 5 for a
 * value outside the enum. */
int rigmat_exit_code(rigmat_status st);

/* ----------------------------------------------------------- diagnostics */

typedef enum rigmat_severity { RIGMAT_ERROR = 0, RIGMAT_WARNING, RIGMAT_NOTE } rigmat_severity;

/* A list of diagnostics: errors, warnings and notes, each with its place
 * in an input file when it has one.  Owned by the caller, who creates it
 * with rigmat_diags_new, passes it to the functions below (each appends
 * to it) and frees it with rigmat_diags_free. */
typedef struct rigmat_diags rigmat_diags;

/* One diagnostic as the caller reads it.  The strings belong to the list
 * and are valid until it is freed. */
typedef struct rigmat_diag_view {
    rigmat_severity severity;
    const char *file;     /* the input file, or NULL when the problem has no place */
    unsigned long line;   /* 1-based; 0 = unknown */
    unsigned long column; /* 1-based, in characters; 0 = unknown */
    const char *context;  /* the enclosing entry ("body 'chassis'"), or NULL */
    const char *message;  /* lowercase, no full stop; never NULL */
    const char *hint;     /* how to fix it, or NULL */
} rigmat_diag_view;

/* A new empty list, or NULL when out of memory. */
rigmat_diags *rigmat_diags_new(void);
void rigmat_diags_free(rigmat_diags *d);
/* The number of diagnostics recorded (0 for NULL). */
size_t rigmat_diags_count(const rigmat_diags *d);
/* The number of errors found, those recorded plus any dropped past the
 * limit of 50 per load (0 for NULL). */
size_t rigmat_diags_errors(const rigmat_diags *d);
/* Diagnostic i (0 <= i < count) into *out; RIGMAT_EUSAGE when i is out of
 * range or an argument is NULL. */
rigmat_status rigmat_diags_get(const rigmat_diags *d, size_t i, rigmat_diag_view *out);
/* Write every diagnostic to out as the command line prints them:
 * FILE:LINE:COL: error: message, then its note and hint lines, with
 * control characters of the input replaced. */
void rigmat_diags_print(const rigmat_diags *d, FILE *out);

/* ---------------------------------------------------------------- loading */

/* What to load: the model file, values that override it (the command
 * line's --set), and a catalog folder to look for parts in.  Owned by the
 * caller (rigmat_source_free); it copies every string given to it. */
typedef struct rigmat_source rigmat_source;

/* A source for the model file at path, or NULL when out of memory or path
 * is NULL.  The file is read by rigmat_source_load, not here. */
rigmat_source *rigmat_source_new(const char *path);
void rigmat_source_free(rigmat_source *s);
/* Override one value of the model: key is the path in the file
 * ("bodies.chassis.mass"), value the text that replaces it, with units
 * ("4.5 kg").  Checked when the model is loaded (an unknown path or a bad
 * value is then an error naming "--set").  RIGMAT_EUSAGE for a NULL or
 * empty key or a NULL value, RIGMAT_ENOMEM. */
rigmat_status rigmat_source_set(rigmat_source *s, const char *key, const char *value);
/* Look for catalog parts (`part: motors/NAME`) in dir first.  Without it,
 * only the folder beside the library's installed share folder is
 * searched.  RIGMAT_EUSAGE for NULL, RIGMAT_ENOMEM. */
rigmat_status rigmat_source_catalog(rigmat_source *s, const char *dir);

/* A loaded, validated model.  Owned by the caller (rigmat_model_free);
 * read-only once loaded, so threads may share it. */
typedef struct rigmat_model rigmat_model;

/* Read, validate and check the model of s (its equations of motion can be
 * built).  On RIGMAT_OK *out is a new model, and diags may hold warnings.
 * RIGMAT_EMODEL: diags holds at least one error with its place;
 * RIGMAT_EIO: the file cannot be read; RIGMAT_EUSAGE: a NULL argument;
 * RIGMAT_ENOMEM.  s may be freed once this returns. */
rigmat_status rigmat_source_load(const rigmat_source *s, rigmat_model **out, rigmat_diags *diags);
void rigmat_model_free(rigmat_model *m);
/* The model's name (its `name:`), "" when it has none. */
const char *rigmat_model_name(const rigmat_model *m);
/* The order hash: 16 hex digits (FNV-1a 64) over the names and units of
 * the states, inputs and outputs, in order; every export carries it. */
const char *rigmat_model_order_hash(const rigmat_model *m);

/* The vectors of a state-space model. */
typedef enum rigmat_group { RIGMAT_STATES = 0, RIGMAT_INPUTS, RIGMAT_OUTPUTS } rigmat_group;

/* One state, input or output.  Strings belong to the handle asked. */
typedef struct rigmat_signal_view {
    const char *name; /* "tilt.angle", "drive", "gyro" */
    const char *unit; /* "rad", "m/s", "1" ... */
    int disturbance;  /* inputs: 1 for a disturbance, 0 for a control input */
} rigmat_signal_view;

/* The number of states, inputs or outputs of the model (0 for NULL). */
size_t rigmat_model_count(const rigmat_model *m, rigmat_group g);
/* Signal i of group g into *out; RIGMAT_EUSAGE when out of range. */
rigmat_status rigmat_model_signal(const rigmat_model *m, rigmat_group g, size_t i,
        rigmat_signal_view *out);

/* ----------------------------------------------------------------- matrices */

/* A matrix (or a vector, as one column) borrowed from a handle: rows * cols
 * doubles, row-major; data is NULL when rows or cols is 0.  Valid until
 * the handle it came from is freed. */
typedef struct rigmat_matrix_view {
    const double *data;
    size_t rows, cols;
} rigmat_matrix_view;

/* ------------------------------------------------------------------ trim */

/* A steady state found by trim.  Owned by the caller (rigmat_steady_free);
 * it copies what it needs and borrows nothing. */
typedef struct rigmat_steady rigmat_steady;

/* Solve for the unknowns named in operating_point.solve so that the
 * operating point is a steady state (Gauss-Newton with the exact
 * Jacobian).  RIGMAT_ENUMERIC when it does not converge (diags says the
 * residual and which equations or unknowns are the trouble);
 * RIGMAT_EMODEL for a name in solve that matches nothing. */
rigmat_status rigmat_model_trim(const rigmat_model *m, rigmat_steady **out, rigmat_diags *diags);
void rigmat_steady_free(rigmat_steady *t);
/* The largest residual of the balance equations (SI), and the
 * Gauss-Newton iterations taken. */
double rigmat_steady_residual(const rigmat_steady *t);
size_t rigmat_steady_iterations(const rigmat_steady *t);
/* The point found: g = RIGMAT_STATES (x) or RIGMAT_INPUTS (u), as a
 * column in the model's order.  RIGMAT_EUSAGE for RIGMAT_OUTPUTS. */
rigmat_status rigmat_steady_point(const rigmat_steady *t, rigmat_group g, rigmat_matrix_view *out);

/* ------------------------------------------------------------- linearize */

/* The continuous linear model x' = A x + B u (+ f0), y = C x + D u around
 * the operating point, in deviations from it.  Owned by the caller
 * (rigmat_linear_free); borrows its model. */
typedef struct rigmat_linear rigmat_linear;

/* Linearize m at its operating point, trimmed first when
 * operating_point.solve names unknowns.  Warnings (a steady motion along a
 * coordinate that is not cyclic, ...) go to diags.  RIGMAT_ENUMERIC when
 * the trim does not converge, a result is not finite, or the operating
 * point needs an input beyond its limit (README.md, "Limits"). */
rigmat_status rigmat_model_linearize(const rigmat_model *m, rigmat_linear **out,
        rigmat_diags *diags);
void rigmat_linear_free(rigmat_linear *l);
/* The model it came from (borrowed). */
const rigmat_model *rigmat_linear_model(const rigmat_linear *l);
/* A matrix by name: "A", "B", "C", "D", and the operating point as
 * columns "x0", "u0", "y0" and "f0" (f(x0, u0): zero at a steady state).
 * RIGMAT_EUSAGE for another name. */
rigmat_status rigmat_linear_matrix(const rigmat_linear *l, const char *name,
        rigmat_matrix_view *out);
/* Whether the operating point is a steady state (|f0| within tolerance). */
int rigmat_linear_is_steady(const rigmat_linear *l);

/* ------------------------------------------------------------ discretize */

/* The sampled model x[k+1] = Ad x[k] + Bd u[k] + Gd w[k] + fd,
 * y[k] = Cd x[k] + Dd u[k] + Ed w[k], with the noise model Qd, Rd.  Owned
 * by the caller (rigmat_sampled_free); borrows its rigmat_linear. */
typedef struct rigmat_sampled rigmat_sampled;

/* Sample l at rate_hz (> 0) with method "zoh" (NULL: zoh), "foh",
 * "tustin", "euler" or "backward-euler", and build the noise model.
 * RIGMAT_EUSAGE for a bad rate or method or a model without states;
 * RIGMAT_ENUMERIC when the matrix exponential or the noise integral
 * fails. */
rigmat_status rigmat_linear_discretize(const rigmat_linear *l, double rate_hz, const char *method,
        rigmat_sampled **out, rigmat_diags *diags);
void rigmat_sampled_free(rigmat_sampled *s);
/* The sample period (s). */
double rigmat_sampled_period(const rigmat_sampled *s);
/* A matrix by name: "Ad", "Bd", "Cd", "Dd", "Gd", "Ed" (Bd and Dd over
 * the control inputs, Gd and Ed over the disturbances), "Qd", "Rd", and the
 * column "fd".  "Qd" has no data for foh and tustin, whose state is not
 * x (README.md, "State basis").  RIGMAT_EUSAGE for another name. */
rigmat_status rigmat_sampled_matrix(const rigmat_sampled *s, const char *name,
        rigmat_matrix_view *out);
/* The sampled states: those of the model, then any delay stages. */
size_t rigmat_sampled_states(const rigmat_sampled *s);
rigmat_status rigmat_sampled_state(const rigmat_sampled *s, size_t i, rigmat_signal_view *out);

/* ---------------------------------------------------------------- analyze */

/* The eigenvalues of A and what each mode is.  Owned by the caller
 * (rigmat_analysis_free); copies the names it needs, borrows nothing. */
typedef struct rigmat_analysis rigmat_analysis;

typedef struct rigmat_mode_view {
    double re, im;           /* eigenvalue of A (1/s) */
    double z_re, z_im;       /* e^{sT} when analysed with a period; else 0 */
    double frequency_hz;     /* |s| / (2 pi) */
    double damping;          /* -Re s / |s|; NaN when s = 0 */
    double time_constant_s;  /* -1 / Re s (negative: growth); NaN when marginal */
    const char *stability;   /* "stable", "marginal" or "unstable" (static) */
    int controllable;        /* by the control inputs */
    int observable;          /* by the outputs */
    const char *main_state;  /* the state with the largest share in the mode */
} rigmat_mode_view;

/* Analyse l: eigenvalues sorted by |s|, a complex pair as two modes (Im > 0
 * first).  period_s > 0 adds the sampled eigenvalues z = e^{sT}; 0 leaves
 * them out.  RIGMAT_ENUMERIC when an iteration fails; RIGMAT_EUSAGE for a
 * negative period; RIGMAT_EMODEL when the model is too large to analyse
 * (work n^3 (n + inputs x outputs) above 1e9, about 170 states: README.md,
 * "Rules worth knowing"). */
rigmat_status rigmat_linear_analyze(const rigmat_linear *l, double period_s,
        rigmat_analysis **out, rigmat_diags *diags);
void rigmat_analysis_free(rigmat_analysis *a);
size_t rigmat_analysis_count(const rigmat_analysis *a);
rigmat_status rigmat_analysis_mode(const rigmat_analysis *a, size_t i, rigmat_mode_view *out);
/* The one-line summary `rigmat linearize` ends with ("1 unstable mode at
 * 5.3 rad/s, lives in tilt; ...") into buf (always terminated, cut to
 * size).  Returns the length it wanted, as snprintf does. */
size_t rigmat_analysis_summary(const rigmat_analysis *a, char *buf, size_t size);

/* --------------------------------------------------------------- simulate */

/* A time response: rows of t, x, u, y (absolute values, not deviations).
 * Owned by the caller (rigmat_response_free); borrows nothing. */
typedef struct rigmat_response rigmat_response;

/* How to run one response of the model from x0 + offset with the inputs
 * held at u0. */
typedef struct rigmat_run_spec {
    const char *model;     /* "nonlinear" (NULL: the same), "linear" or "sampled" */
    double duration_s;     /* > 0 */
    double step_s;         /* > 0: the output interval */
    double rate_hz;        /* "sampled": the sample rate; step_s must be a whole
                            * number of its periods */
    const double *offset;  /* the initial deviation from x0 (one per state), or NULL */
} rigmat_run_spec;

/* Run spec on the model of l.  RIGMAT_EUSAGE for a bad spec (non-positive
 * duration or step, an unknown model, too many rows); RIGMAT_ENUMERIC when
 * the integration fails (the message says when). */
rigmat_status rigmat_linear_simulate(const rigmat_linear *l, const rigmat_run_spec *spec,
        rigmat_response **out, rigmat_diags *diags);
void rigmat_response_free(rigmat_response *r);
/* "t" (rows x 1), "x" (rows x states), "u" (rows x inputs), "y" (rows x
 * outputs); RIGMAT_EUSAGE for another name. */
rigmat_status rigmat_response_matrix(const rigmat_response *r, const char *name,
        rigmat_matrix_view *out);

/* ----------------------------------------------------------------- export */

/* Options of an export; a NULL pointer to them means all defaults. */
typedef struct rigmat_export_opts {
    const char *name;  /* c: prefix of the header's identifiers; NULL = the model's name */
    int ctype_float;   /* c: float arrays (9 significant digits) instead of double */
    const char *source; /* the provenance line of c, numpy and the other exports
                         * ("balancer.yaml (FNV-1a ...)"); NULL = none */
    /* A folder format (mtx) writes one file per matrix: open_file(ctx,
     * "Ad.mtx") returns a stream the caller owns (and closes after the
     * export returns), or NULL to fail with RIGMAT_EIO.  NULL for a
     * folder format: RIGMAT_EUSAGE. */
    FILE *(*open_file)(void *ctx, const char *file_name);
    void *ctx;
} rigmat_export_opts;

/* Write the linear or sampled model to out in format: "text", "json",
 * "csv", "c", "numpy", "latex" (the bytes `rigmat linearize` and `rigmat
 * discretize --rate R --format FORMAT` write, less the program's text
 * summary of modes and the provenance line, unless opts->source gives
 * it), or "mtx" through
 * opts->open_file (out unused).  Nothing is written when a number is not
 * finite (RIGMAT_ENUMERIC, naming it).  RIGMAT_EUSAGE for an unknown
 * format; RIGMAT_EIO when writing to out fails (ferror). */
rigmat_status rigmat_linear_export(const rigmat_linear *l, const char *format,
        const rigmat_export_opts *opts, FILE *out, rigmat_diags *diags);
rigmat_status rigmat_sampled_export(const rigmat_sampled *s, const char *format,
        const rigmat_export_opts *opts, FILE *out, rigmat_diags *diags);

#ifdef __cplusplus
}
#endif

#endif /* RIGMAT_H */
