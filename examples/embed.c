/* embed.c - a program that embeds librigmat through its public API
 * (include/rigmat.h): load a model, override one value, linearize, sample
 * at 200 Hz, print the modes to standard error and the sampled model as
 * JSON to standard output.  The JSON is what
 *
 *     rigmat discretize MODEL --rate 200Hz --set "bodies.chassis.mass=4.5 kg" --format json
 *
 * writes (tests/install.sh compares the two byte for byte).
 *
 * Build it against an installed rigmat:
 *     cc -std=c99 -o embed examples/embed.c $(pkg-config --cflags --libs --static rigmat)
 * Run it:
 *     ./embed examples/balancer.yaml > balancer-200hz.json
 *
 * Every failure is reported by printing the diagnostics the library
 * returned; the exit code is the one the rigmat program would use.
 */
#include <rigmat.h>

#include <gsl/gsl_errno.h>
#include <math.h>
#include <stdio.h>

/* Print what went wrong, free the list, and return the exit code. */
static int fail(rigmat_diags *d, rigmat_status st, const char *step)
{
    fprintf(stderr, "embed: %s failed (%s)\n", step, rigmat_status_name(st));
    rigmat_diags_print(d, stderr);
    rigmat_diags_free(d);
    return rigmat_exit_code(st);
}

int main(int argc, char **argv)
{
    rigmat_diags *d;
    rigmat_source *src;
    rigmat_model *m = NULL;
    rigmat_linear *lin = NULL;
    rigmat_sampled *smp = NULL;
    rigmat_analysis *an = NULL;
    rigmat_status st;
    char summary[512];
    size_t i, n;
    int code = 0;

    if (argc != 2) {
        fprintf(stderr, "usage: embed MODEL.yaml\n");
        return 2;
    }
    /* rigmat checks every GSL status itself; GSL must not abort */
    gsl_set_error_handler_off();
    d = rigmat_diags_new();
    src = rigmat_source_new(argv[1]);
    if (d == NULL || src == NULL) {
        fprintf(stderr, "embed: out of memory\n");
        rigmat_source_free(src);
        rigmat_diags_free(d);
        return 4;
    }
    /* the --set mechanism: a heavier chassis (a path of the model file) */
    st = rigmat_source_set(src, "bodies.chassis.mass", "4.5 kg");
    if (st == RIGMAT_OK)
        st = rigmat_source_load(src, &m, d);
    rigmat_source_free(src);
    if (st != RIGMAT_OK)
        return fail(d, st, "loading the model");
    /* warnings of a model that loads are worth showing too */
    rigmat_diags_print(d, stderr);

    st = rigmat_model_linearize(m, &lin, d);
    if (st == RIGMAT_OK)
        st = rigmat_linear_discretize(lin, 200.0, "zoh", &smp, d);
    if (st == RIGMAT_OK)
        st = rigmat_linear_analyze(lin, rigmat_sampled_period(smp), &an, d);
    if (st != RIGMAT_OK) {
        code = fail(d, st, "the linear model");
        d = NULL;
        goto out;
    }

    /* the modes, on standard error so standard output is the JSON alone */
    rigmat_analysis_summary(an, summary, sizeof summary);
    fprintf(stderr, "%s: %s\n", rigmat_model_name(m), summary);
    n = rigmat_analysis_count(an);
    for (i = 0; i < n; i++) {
        rigmat_mode_view mv;
        if (rigmat_analysis_mode(an, i, &mv) != RIGMAT_OK)
            continue;
        fprintf(stderr, "  s = %10.4f %+10.4fj 1/s  |z| at 200 Hz %.6f  %-8s in %s\n", mv.re,
                mv.im, hypot(mv.z_re, mv.z_im), mv.stability, mv.main_state);
    }

    st = rigmat_sampled_export(smp, "json", NULL, stdout, d);
    if (st == RIGMAT_OK && fflush(stdout) != 0)
        st = RIGMAT_EIO;
    if (st != RIGMAT_OK) {
        code = fail(d, st, "writing the JSON");
        d = NULL;
    }
out:
    rigmat_analysis_free(an);
    rigmat_sampled_free(smp);
    rigmat_linear_free(lin);
    rigmat_model_free(m);
    rigmat_diags_free(d);
    return code;
}
