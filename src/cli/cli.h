/* cli.h - what every subcommand of the rigmat program shares.
 *
 * A subcommand is one file src/cli/cmd_<name>.c defining
 *     rigmat_status cmd_<name>(int argc, char **argv, struct cli_env *env);
 * and one row in the table in src/cli/main.c.  It parses its options with
 * cli_parse() from a table (src/cli/opt.c), loads the model with
 * cli_load_model(), and writes its result to env->out, a memory stream:
 * main() copies it to standard output or to the -o file only when the
 * command returns RIGMAT_OK, so output is written whole or not at all.
 * Diagnostics go to env->err (standard error) as they happen.
 */
#ifndef RIGMAT_CLI_H
#define RIGMAT_CLI_H

#include "rigmat_internal.h"
#include "result.h"
#include <stdio.h>

/* The files of a folder format (mtx): each a memory stream, written to
 * the -o folder by main() whole or not at all (src/cli/outdir.c). */
struct cli_file {
    char *name; /* "Ad.mtx" */
    char *buf;
    size_t len;
    FILE *f;
    const char *tail; /* NULL, or tail_len bytes written after buf's: memory the
                       * files keep (cli_files.keep), not copied */
    size_t tail_len;
};
struct cli_files {
    struct cli_file items[64];
    size_t n;
    void *keep[4]; /* freed with the files: storage the tails point into */
    int folder;   /* a folder format was rendered: -o names a folder */
    char ext[16]; /* the extension of its files (".mtx") */
};

struct cli_env {
    const char *command;    /* "linearize" */
    FILE *out;              /* memory stream for the result */
    FILE *err;              /* standard error */
    rigmat_options opt;     /* defaults, adjusted by common options */
    const char *output;     /* -o FILE, or NULL for standard output */
    struct cli_files files; /* a folder format's files, or none */
    /* the files read (model, parts, weights), by device and inode, so an
     * output that is one of them is refused (src/cli/guard.c) */
    struct cli_input {
        unsigned long long dev, ino;
    } inputs[64];
    size_t ninputs;
    int inputs_lost; /* more inputs than fit: every regular output is refused */
    int keep_on_failure;    /* the command's result is written even though it returns
                             * RIGMAT_ENUMERIC (a trim that did not converge, JSON) */
};

/* A stream that discards what is written (a finite check by rendering the
 * JSON of a result that is then printed as text); NULL when none opens. */
FILE *cli_scratch_open(void);
void cli_scratch_close(FILE *f);
/* Print text from the input with control characters shown as '?'. */
void cli_put_clean(FILE *f, const char *s);
/* Warn (once) when --catalog or $RIGMAT_CATALOG is not a folder: it is
 * then not searched. */
void cli_catalog_warn(struct cli_env *env);
/* Record a file that was read (src/cli/guard.c); names that are not files
 * ("--set") are skipped. */
void cli_note_input(struct cli_env *env, const char *path);
/* Record the files a loaded model came from: the model and its parts. */
void cli_note_model_inputs(struct cli_env *env, const rigmat_model *m);
/* RIGMAT_EUSAGE, with a message, when path (-o, --plot) is one of the inputs. */
rigmat_status cli_output_guard(struct cli_env *env, const char *path);

enum cli_opt_type {
    CLI_OPT_END = 0,
    CLI_OPT_FLAG,   /* int *: set to 1 */
    CLI_OPT_STRING, /* const char **: last one wins */
    CLI_OPT_LIST    /* struct cli_list *: repeatable */
};

struct cli_list {
    const char *items[64];
    size_t count;
};

struct cli_opt {
    char short_name;        /* 0 for none */
    const char *long_name;  /* without the dashes */
    enum cli_opt_type type;
    void *value;
    const char *arg;        /* "FREQ" in the help; NULL for flags */
    const char *help;       /* one line */
};

#define CLI_OPT_END_ROW { 0, NULL, CLI_OPT_END, NULL, NULL, NULL }

/* The folder of the running program into buf (from /proc/self/exe, else
 * from argv0 when it names a path), or NULL when it cannot be found
 * (src/cli/exe_dir.c). */
const char *cli_exe_dir(const char *argv0, char *buf, size_t len);

/* The options most commands take: --set, --format, -o, --catalog; and
 * those of the export formats (CLI_EXPORT_ROWS): --name, --ctype. */
struct cli_common {
    struct cli_list sets;
    const char *format;  /* NULL = text */
    const char *catalog;
    int help;
    const char *name;    /* c: identifier prefix */
    const char *ctype;   /* c: "double" (default) or "float" */
};
#define CLI_COMMON_ROWS(c) \
    { 0, "set", CLI_OPT_LIST, &(c)->sets, "PATH=VALUE", \
      "override a model value, with units (repeatable)" }, \
    { 0, "format", CLI_OPT_STRING, &(c)->format, "FORMAT", "output format (the list in the usage line)" }, \
    { 'o', "output", CLI_OPT_STRING, NULL, "FILE", \
      "write the result to FILE (mtx: to folder FILE), whole or not at all" }, \
    { 0, "catalog", CLI_OPT_STRING, &(c)->catalog, "DIR", "look for catalog parts in DIR first" }, \
    { 'h', "help", CLI_OPT_FLAG, &(c)->help, NULL, "show this help" }

#define CLI_EXPORT_ROWS(c) \
    { 0, "name", CLI_OPT_STRING, &(c)->name, "NAME", \
      "c: prefix of the header's identifiers (default: the model's name)" }, \
    { 0, "ctype", CLI_OPT_STRING, &(c)->ctype, "TYPE", "c: double (default) or float" }

/* Every --format word a command with matrices offers, NULL-terminated. */
extern const char *const cli_all_formats[];

/* Parse argv[1..argc-1] against opts; positional arguments are returned in
 * pos (pointers into argv).  `-o`/`--output` always sets env->output.
 * On misuse prints one line to env->err ("rigmat linearize: unknown option
 * '--x'") and returns RIGMAT_EUSAGE. */
rigmat_status cli_parse(int argc, char **argv, const struct cli_opt *opts, struct cli_env *env,
        const char **pos, size_t maxpos, size_t *npos);

/* Print "usage: ..." lines and the option table to f. */
void cli_usage(FILE *f, const char *const *usage, const struct cli_opt *opts);

/* Check a --format value against the accepted names (NULL-terminated);
 * text when fmt is NULL.  Returns the index, or -1 after a usage message. */
int cli_format(struct cli_env *env, const char *fmt, const char *const *accepted);

/* Load FILE with the common options applied; prints diagnostics to
 * env->err.  Returns RIGMAT_EMODEL / RIGMAT_EIO on failure. */
rigmat_status cli_load_model(struct cli_env *env, const char *file, const struct cli_common *c,
        rigmat_model **out);

/* The opening every command on one model FILE shares: parse argv against
 * opts, print the help to stdout on --help (then *done is 1), require one
 * FILE (*file), and check --format against formats (*fmt, its index).
 * Usage errors are printed with the usage; returns RIGMAT_EUSAGE. */
rigmat_status cli_model_command(int argc, char **argv, const struct cli_opt *opts,
        const char *const *usage, const char *const *formats, struct cli_env *env,
        const struct cli_common *c, const char **file, int *fmt, int *done);

/* Check --name and --ctype against the --format of c (they apply to the
 * C header only); prints a usage error and returns RIGMAT_EUSAGE. */
rigmat_status cli_export_options(struct cli_env *env, const struct cli_common *c);

/* Render r in the --format of c (text when none) to env->out, or for a
 * folder format into env->files; model_file gives the provenance line of
 * the exports.  A non-finite number is reported here
 * (exit 3, naming it), whatever the format.  Returns the status. */
rigmat_status cli_emit(struct cli_env *env, const rigmat_result *r, const struct cli_common *c,
        const char *model_file);

/* The provenance line of the exports into source: the model file's name,
 * the FNV-1a 64 hash of its bytes and the --set options; returns source. */
const char *cli_source_line(const struct cli_common *c, const char *model_file, char *source,
        size_t len);
/* Write env->files into the folder path whole or not at all: a new folder
 * built beside it and renamed into place; an existing one is replaced only
 * when it holds nothing but files of the same extension (a previous
 * export).  RIGMAT_EIO with err filled on failure, the old folder kept. */
rigmat_status cli_outdir_write(const char *path, struct cli_files *files, rigmat_error *err);
void cli_files_release(struct cli_files *files);

/* Linearize m at its operating point, printing the warnings to env->err
 * and reporting a failure (its status is returned). */
rigmat_status cli_linearize(struct cli_env *env, const rigmat_model *m, rigmat_lti **out);

/* Report a rigmat_error on env->err as "rigmat CMD: error: message" (with
 * its place when it has one) and the hint; returns err->status. */
/* The model's name as every command's text shows it: "(unnamed)" for a
 * model without one (JSON keeps "" under "model", as documented). */
const char *cli_model_name(const rigmat_model *m);

rigmat_status cli_report(struct cli_env *env, const rigmat_error *err);

/* Parse a quantity given on the command line for an option, e.g.
 * --rate 200Hz as a frequency; prints a usage error on failure. */
rigmat_status cli_quantity(struct cli_env *env, const char *option, const char *text, int kind,
        double *value_si);

/* ------------------------------------------------------- sign table */

/* The sign table of README.md ("Signs and frames") for `rigmat check`
 * (src/cli/cmd_check_signs.c): for each input, the sign of the first
 * non-zero response of every coordinate (its acceleration, or a lower
 * derivative for a driven input) and of every sensor, from the
 * linearization at the operating point: a "sign_table" member added to
 * the result r, with its own text layout.  When the model cannot be
 * linearized the member is null and the text says why. */
void check_sign_table(struct cli_env *env, const rigmat_model *m, rigmat_result *r);

/* ------------------------------------------------------- modes summary */

/* The one-line modes summary (src/study/modes.h) that `check` and
 * `linearize` print at the end of their text: "\nmodes: ...\n" to
 * env->out.  l may be NULL: the model is then linearized here, quietly.
 * When the analysis fails it says so on that line (src/cli/cmd_modes.c). */
void cli_modes_summary(struct cli_env *env, const rigmat_model *m, const rigmat_lti *l);

/* ---------------------------------------------------- validity range */

struct rigmat_validity_opts;
struct rigmat_validity_item;
/* Append the validity table of the linear model (src/study/validity.h)
 * to r: its text lines and the JSON members "criterion", "horizon" and
 * "validity" (src/cli/validity.c). */
void cli_validity_describe(rigmat_result *r, const rigmat_model *m,
        const struct rigmat_validity_opts *o, const struct rigmat_validity_item *it, size_t n);

#endif /* RIGMAT_CLI_H */
