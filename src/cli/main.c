/* main.c - the rigmat program: the command table, the shared set-up and
 * tear-down, and the one mapping from status to exit code.
 *
 * Every command writes its result into a memory stream; only when it
 * returns RIGMAT_OK is the result copied to standard output or to the -o
 * file, so a failure part-way never leaves half a result behind.
 */
#include "cli.h"
#include "outfile.h"
#include "reentrant.h"
#include "share_dir.h" /* RIGMAT_SHARE_DIR, from the Makefile */

#include <errno.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_errno.h>

#define CMD(name) rigmat_status cmd_##name(int argc, char **argv, struct cli_env *env);
CMD(check)
CMD(linearize)
CMD(trim)
CMD(discretize)
CMD(modes)
CMD(gains)
CMD(firmware)
CMD(parts)
CMD(simulate)
CMD(report)
CMD(sweep)
#undef CMD

struct command {
    const char *name;
    rigmat_status (*fn)(int, char **, struct cli_env *);
    const char *summary;
};

static const struct command commands[] = {
    { "check", cmd_check, "validate a model; summary, noise per sample, sign table" },
    { "linearize", cmd_linearize, "continuous A, B, C, D at the operating point" },
    { "discretize", cmd_discretize, "sampled model and Kalman noise model at a rate" },
    { "modes", cmd_modes, "eigenvalues, modes, reach and sight, zeros, DC gain" },
    { "simulate", cmd_simulate, "one response: nonlinear, linear or sampled; validity range" },
    { "sweep", cmd_sweep, "linear and sampled models over a grid of values" },
    { "gains", cmd_gains, "steady-state Kalman gain; LQR gain with --weights" },
    { "firmware", cmd_firmware, "C99 for a microcontroller: f, h, exact Jacobians, KF, EKF" },
    { "trim", cmd_trim, "solve the operating point; print it and the residual" },
    { "parts", cmd_parts, "list the catalog, or show one part" },
    { "report", cmd_report, "HTML report with plots: modes, responses, validity, sampled model" },
};

/* Exit codes, documented in README.md: the library's one mapping. */
static int exit_code(rigmat_status st)
{
    return rigmat_exit_code(st);
}

static void main_usage(FILE *f)
{
    size_t i;

    fputs("usage: rigmat COMMAND FILE [options]\n\n"
          "Turn a YAML description of a planar mechanism into its state-space model.\n\n"
          "commands:\n", f);
    for (i = 0; i < sizeof commands / sizeof commands[0]; i++)
        fprintf(f, "  %-12s %s\n", commands[i].name, commands[i].summary);
    fputs("\n'rigmat COMMAND --help' shows a command's options.\n"
          "exit codes: 0 ok, 1 bad model, 2 bad usage, 3 numerical failure,\n"
          "            4 input/output error, 5 internal error\n", f);
}

/* Copy the result to the -o file (whole or not at all) or to standard
 * output.  Tests provoke a failing write with the LD_PRELOAD shim
 * tests/shim/writefail.c; the program has no test hook of its own. */
static rigmat_status emit(struct cli_env *env, const char *data, size_t len)
{
    char why[RIGMAT_STRERROR_LEN];
    rigmat_error e;

    memset(&e, 0, sizeof e);
    if (env->output != NULL && strcmp(env->output, "-") != 0) {
        if (cli_outfile_write(env->output, data, len, &e) != RIGMAT_OK)
            return cli_report(env, &e);
        return RIGMAT_OK;
    }
    if (len > 0 && fwrite(data, 1, len, stdout) != len) {
        fprintf(env->err, "rigmat %s: error: cannot write the output: %s\n", env->command,
                rigmat_strerror(errno, why, sizeof why));
        return RIGMAT_EIO;
    }
    return RIGMAT_OK;
}

/* A folder format's files (mtx), all or none, into the -o folder. */
static rigmat_status emit_folder(struct cli_env *env)
{
    rigmat_error e;
    size_t i;

    memset(&e, 0, sizeof e);
    for (i = 0; i < env->files.n; i++) {
        struct cli_file *cf = &env->files.items[i];
        const int bad = cf->f != NULL && fclose(cf->f) != 0; /* NULL: bytes given whole */
        cf->f = NULL;
        if (bad) {
            fprintf(stderr, "rigmat %s: out of memory while writing the result\n", env->command);
            return RIGMAT_ENOMEM;
        }
    }
    if (cli_outdir_write(env->output, &env->files, &e) != RIGMAT_OK)
        return cli_report(env, &e);
    return RIGMAT_OK;
}

int main(int argc, char **argv)
{
    struct cli_env env;
    const struct command *cmd = NULL;
    char *buf = NULL, exe_dir[4096];
    size_t len = 0, i;
    rigmat_status st;
    char why[RIGMAT_STRERROR_LEN];

    gsl_set_error_handler_off();
    memset(&env, 0, sizeof env);
    env.err = stderr;
    env.opt = rigmat_options_default();
    env.opt.catalog_env = getenv("RIGMAT_CATALOG");
    env.opt.catalog_share = RIGMAT_SHARE_DIR;
    env.opt.catalog_exe = cli_exe_dir(argc > 0 ? argv[0] : NULL, exe_dir, sizeof exe_dir);

    if (argc < 2) {
        main_usage(stderr);
        return exit_code(RIGMAT_EUSAGE);
    }
    if (strcmp(argv[1], "--help") == 0 || strcmp(argv[1], "-h") == 0 ||
            strcmp(argv[1], "help") == 0) {
        main_usage(stdout);
        st = RIGMAT_OK;
        goto out;
    }
    if (strcmp(argv[1], "--version") == 0) {
        printf("rigmat %s (model schema %d)\n", RIGMAT_VERSION, RIGMAT_SCHEMA);
        st = RIGMAT_OK;
        goto out;
    }
    for (i = 0; i < sizeof commands / sizeof commands[0]; i++)
        if (strcmp(argv[1], commands[i].name) == 0)
            cmd = &commands[i];
    if (cmd == NULL) {
        fprintf(stderr, "rigmat: unknown command '%s'\n", argv[1]);
        fputs("  hint: 'rigmat --help' lists the commands\n", stderr);
        return exit_code(RIGMAT_EUSAGE);
    }
    env.command = cmd->name;
    env.out = open_memstream(&buf, &len);
    if (env.out == NULL) {
        fprintf(stderr, "rigmat: out of memory\n");
        return exit_code(RIGMAT_ENOMEM);
    }
    st = cmd->fn(argc - 1, argv + 1, &env);
    if (fclose(env.out) != 0 && st == RIGMAT_OK) {
        fprintf(stderr, "rigmat %s: out of memory while writing the result\n", cmd->name);
        st = RIGMAT_ENOMEM;
    }
    if (st == RIGMAT_OK || (st == RIGMAT_ENUMERIC && env.keep_on_failure)) {
        /* never write over an input (the model, a part, a weights file) */
        const rigmat_status sg = cli_output_guard(&env, env.output);
        if (sg != RIGMAT_OK)
            st = sg;
    }
    if (st == RIGMAT_OK && env.files.folder) {
        st = emit_folder(&env);
    } else if (st == RIGMAT_OK) {
        st = emit(&env, buf, len);
    } else if (st == RIGMAT_ENUMERIC && env.keep_on_failure && !env.files.folder) {
        /* the result of a failure that is still worth reading (a trim
         * that did not converge); the exit code stays 3 */
        const rigmat_status st2 = emit(&env, buf, len);
        if (st2 != RIGMAT_OK)
            st = st2;
    }
    cli_files_release(&env.files);
    free(buf);
out:
    /* A lost result must not exit 0 (a full disk, /dev/full). */
    if (fflush(stdout) != 0 || ferror(stdout) || fclose(stdout) != 0) {
        if (st == RIGMAT_OK || st == RIGMAT_EUSAGE) {
            fprintf(stderr, "rigmat: error: writing the output failed: %s\n",
                    rigmat_strerror(errno, why, sizeof why));
            st = RIGMAT_EIO;
        }
    }
    return exit_code(st);
}
