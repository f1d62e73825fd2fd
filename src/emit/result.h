/* result.h - one description of a result, one writer per format (stage 5).
 *
 * A command describes what it found once, as a rigmat_result: a tree of
 * nodes in the order the JSON contract lists them (README.md, "JSON
 * output").  A node is a scalar (number with its unit, integer, boolean,
 * string, null), an object or array of nodes, a matrix with its row and
 * column names and units, a vector with its names, or a list of signals
 * ({name, unit[, role]}).  Each node says where it appears (text, JSON, the
 * export formats) and may carry its own line of the text layout.  The
 * result also records the name lists that size its matrices (states,
 * inputs, disturbances, outputs): the C header's enums and #defines.
 *
 * Then one writer per format renders any result (rigmat_result_write).
 * Before a byte is written, one check walks every number of the tree and
 * refuses a non-finite one (RIGMAT_ENUMERIC, naming the value), whatever
 * the format.
 *
 * Ownership: the result owns copies of every number, matrix, vector and
 * string put into it.  Signal lists (rigmat_signal arrays) are borrowed:
 * they must outlive the result.  Building never fails midway for the
 * caller: an allocation failure is remembered and returned by
 * rigmat_result_write (RIGMAT_ENOMEM), so a command can build without
 * checking every call.  A result is not shared between threads while it
 * is built; a finished one may be written from several threads at once.
 */
#ifndef RIGMAT_RESULT_H
#define RIGMAT_RESULT_H

#include "rigmat_internal.h"
#include <stdio.h>

/* ------------------------------------------------------------ formats */

typedef enum rigmat_format {
    RIGMAT_FORMAT_TEXT = 0,
    RIGMAT_FORMAT_JSON,
    RIGMAT_FORMAT_CSV,
    RIGMAT_FORMAT_C,
    RIGMAT_FORMAT_NUMPY,
    RIGMAT_FORMAT_MTX,
    RIGMAT_FORMAT_LATEX
} rigmat_format;

/* One entry of the format table: adding a format is one entry here plus
 * its writer (src/emit/export.c). */
typedef struct rigmat_format_info {
    const char *word;      /* the --format value: "csv" */
    rigmat_format format;
    int matrices_only;     /* offered only by results that hold matrices */
    int folder;            /* writes one file per matrix into a folder */
    const char *summary;   /* one line for help and the man page */
} rigmat_format_info;

/* The table, in the order help lists it; *n is set to its length. */
const rigmat_format_info *rigmat_format_table(size_t *n);
/* The entry for a --format word; NULL when there is none. */
const rigmat_format_info *rigmat_format_find(const char *word);

/* ------------------------------------------------------------ the description */

typedef enum rigmat_rtype {
    RIGMAT_R_OBJECT,
    RIGMAT_R_ARRAY,
    RIGMAT_R_NUMBER,
    RIGMAT_R_INTEGER,
    RIGMAT_R_BOOL,
    RIGMAT_R_STRING,
    RIGMAT_R_NULL,
    RIGMAT_R_MATRIX,
    RIGMAT_R_VECTOR,
    RIGMAT_R_SIGNALS,
    RIGMAT_R_TEXT /* a line of the text layout only */
} rigmat_rtype;

/* Where a node appears. */
enum rigmat_show_flags {
    RIGMAT_SHOW_TEXT = 1 << 0,
    RIGMAT_SHOW_JSON = 1 << 1,
    RIGMAT_SHOW_EXPORT = 1 << 2, /* csv, c, numpy, mtx, latex */
    RIGMAT_SHOW_ALL = 7
};

typedef struct rigmat_rnode {
    rigmat_rtype type;
    unsigned show;          /* rigmat_show_flags */
    int compact;            /* JSON: the whole value on one line */
    char *key;              /* member name in an object; NULL inside an array */
    char *title;            /* text heading of a matrix or vector; NULL = key */
    char *text;             /* its own text rendering (children are then not shown) */
    char *export_name;      /* identifier in the exports; NULL = the keys joined by '_' */
    char *unit;             /* of a number (text and export comments); NULL = none */
    double num;             /* RIGMAT_R_NUMBER */
    long integer;           /* RIGMAT_R_INTEGER, RIGMAT_R_BOOL */
    char *str;              /* RIGMAT_R_STRING, RIGMAT_R_TEXT */
    double *data;           /* matrix (rows x cols, row-major) or vector (rows) */
    size_t rows, cols;
    const rigmat_signal *row_names, *col_names; /* borrowed; NULL = unnamed */
    int with_role;          /* RIGMAT_R_SIGNALS: 1 each entry carries its role (inputs),
                             * 2 its kind (states: coordinate, rate, current, shaping,
                             * delay), 0 neither */
    int text_list;          /* vector: "name value unit" lines, no blank line after */
    size_t parent, first, last, next; /* indices into the node array; RIGMAT_NONE */
} rigmat_rnode;

/* A name list that sizes matrices: "state", "input", "disturbance", "output". */
typedef struct rigmat_rdim {
    const char *word;         /* static string */
    const rigmat_signal *sig; /* borrowed */
    size_t n;
} rigmat_rdim;

#define RIGMAT_RESULT_MAX_DIMS 8

typedef struct rigmat_result {
    rigmat_rnode *nodes;  /* nodes[0] is the root object */
    size_t n, cap;
    size_t open;          /* the object or array being filled */
    char *pending_key;    /* the key for the next value */
    rigmat_status status; /* sticky: RIGMAT_ENOMEM after a failed allocation */
    char *kind, *model, *order_hash;
    rigmat_rdim dims[RIGMAT_RESULT_MAX_DIMS];
    size_t ndims;
} rigmat_result;

/* A new empty result of the given kind ("continuous", "discrete", ...);
 * NULL when out of memory.  Free with rigmat_result_free (NULL is fine). */
rigmat_result *rigmat_result_alloc(const char *kind);
void rigmat_result_free(rigmat_result *r);

/* The common head of every result: rigmat (version), model, kind,
 * order_hash, states, inputs (with role), outputs. */
void rigmat_result_head(rigmat_result *r, const char *model, const char *order_hash,
        const rigmat_signal *states, size_t nx, const rigmat_signal *inputs, size_t nu,
        const rigmat_signal *outputs, size_t ny);
/* A new result of the given kind headed by a model's layout: the head
 * above with the model's name, order hash and signals, and the state,
 * input and output lists as dims.  NULL when out of memory. */
rigmat_result *rigmat_result_for_layout(const char *kind, const char *model,
        const rigmat_layout *L);
/* Record a name list that sizes matrices (for the C header's enums). */
void rigmat_result_dim(rigmat_result *r, const char *word, const rigmat_signal *sig, size_t n);

/* Builder, in the order of the JSON: key, then a value. */
void rigmat_result_key(rigmat_result *r, const char *key);
void rigmat_result_object(rigmat_result *r); /* open; close with rigmat_result_close */
void rigmat_result_array(rigmat_result *r);
void rigmat_result_close(rigmat_result *r);
void rigmat_result_number(rigmat_result *r, double v, const char *unit);
void rigmat_result_integer(rigmat_result *r, long v);
void rigmat_result_bool(rigmat_result *r, int v);
void rigmat_result_string(rigmat_result *r, const char *s);
void rigmat_result_null(rigmat_result *r);
/* m may be NULL when a size is 0 (or for zeros); the names may be NULL. */
void rigmat_result_matrix(rigmat_result *r, const gsl_matrix *m, size_t rows, size_t cols,
        const rigmat_signal *row_names, const rigmat_signal *col_names);
/* v may be NULL (zeros); stride 1 array form below. */
void rigmat_result_vector(rigmat_result *r, const gsl_vector *v, size_t n,
        const rigmat_signal *names);
void rigmat_result_values(rigmat_result *r, const double *v, size_t n,
        const rigmat_signal *names);
void rigmat_result_signals(rigmat_result *r, const rigmat_signal *s, size_t n, int with_role);
/* A line (or lines) of the text layout only, printf-style; include "\n". */
void rigmat_result_text(rigmat_result *r, const char *fmt, ...) RIGMAT_PRINTF(2, 3);

/* Presentation of the node just added (or the object/array just closed). */
void rigmat_result_show(rigmat_result *r, unsigned show);
void rigmat_result_compact(rigmat_result *r);
void rigmat_result_title(rigmat_result *r, const char *title);
/* A vector's text as a list ("  name  value unit") instead of a table. */
void rigmat_result_text_list(rigmat_result *r);
void rigmat_result_export_name(rigmat_result *r, const char *name);
/* Its own text rendering, printf-style (the node's children are not shown). */
void rigmat_result_as_text(rigmat_result *r, const char *fmt, ...) RIGMAT_PRINTF(2, 3);

/* Whether the result holds a matrix (the export formats need one). */
int rigmat_result_has_matrices(const rigmat_result *r);

/* ------------------------------------------------------------ writing */

/* Where a folder format (mtx) puts its files: open(ctx, "Ad.mtx") returns
 * a stream the sink owns and closes; NULL on failure (the writer then
 * returns RIGMAT_EIO). */
typedef struct rigmat_emit_sink {
    FILE *(*open)(void *ctx, const char *file_name);
    void *ctx;
} rigmat_emit_sink;

typedef struct rigmat_emit_opts {
    const char *name;   /* c: identifier prefix; NULL = from the model's name */
    int ctype_float;    /* c: float arrays (9 significant digits, f suffix) */
    const char *source; /* provenance: "model FILE (hash ...)"; NULL = none */
    const char *c_tail; /* c: text written before the closing #endif; NULL = none */
} rigmat_emit_opts;

/* Render r in format fmt to out (for a folder format, to the files opened
 * through sink, which may then not be NULL; out is unused).  Statuses:
 * RIGMAT_ENUMERIC when a number is not finite, or a float C header cannot
 * hold one (err names it; nothing is written); RIGMAT_ENOMEM when the
 * result could not be built; RIGMAT_EUSAGE when an export format is asked
 * of a result without matrices, or a folder format without a sink;
 * RIGMAT_EIO when the sink cannot open a file.  Write errors of the
 * streams themselves are the caller's to check (ferror, fclose). */
rigmat_status rigmat_result_write(const rigmat_result *r, rigmat_format fmt,
        const rigmat_emit_opts *o, FILE *out, const rigmat_emit_sink *sink, rigmat_error *err);

/* The check alone: RIGMAT_ENUMERIC naming the first non-finite number. */
rigmat_status rigmat_result_check_finite(const rigmat_result *r, rigmat_error *err);

/* ------------------------------------------------------------ pieces the writers share */

/* A small JSON emitter: numbers with 17 significant digits, strings
 * escaped, a non-finite number remembered (bad) and written as null. */
typedef struct rigmat_json {
    FILE *f;
    int depth;
    int first[32]; /* first item at this depth; first[0] == 2: a key is pending */
    int bad;       /* a non-finite number was asked for */
    int pretty;
} rigmat_json;
void rigmat_json_begin(rigmat_json *j, FILE *f);
rigmat_status rigmat_json_end(rigmat_json *j);
void rigmat_json_key(rigmat_json *j, const char *key);
void rigmat_json_obj_open(rigmat_json *j);
void rigmat_json_obj_close(rigmat_json *j);
void rigmat_json_arr_open(rigmat_json *j);
void rigmat_json_arr_close(rigmat_json *j);
void rigmat_json_str(rigmat_json *j, const char *s);
void rigmat_json_num(rigmat_json *j, double v);
void rigmat_json_int(rigmat_json *j, long v);
void rigmat_json_bool(rigmat_json *j, int v);
void rigmat_json_null(rigmat_json *j);
/* A matrix as a list of rows, each on one line; NULL m gives zeros. */
void rigmat_json_matrix(rigmat_json *j, const gsl_matrix *m, size_t rows, size_t cols);
void rigmat_json_values(rigmat_json *j, const double *v, size_t n);
void rigmat_json_signals(rigmat_json *j, const rigmat_signal *s, size_t n, int with_role);

/* Text: a labelled matrix, aligned, rows and columns named "name [unit]";
 * data row-major, or NULL when a size is 0 ("(empty)"). */
void rigmat_text_matrix(FILE *f, const char *title, const double *data, size_t ld,
        const rigmat_signal *rows, size_t nrows, const rigmat_signal *cols, size_t ncols);

#endif /* RIGMAT_RESULT_H */
