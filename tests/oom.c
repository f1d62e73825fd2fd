/* oom.c - out of memory at every allocation of a full run (`make check-oom`).
 *
 *     oom [--api] CATALOG MODEL.yaml...
 *
 * For each model, run the pipeline of tests/pipeline.c (load, trim,
 * linearize, discretize, noise, advice) or, with --api, the same steps
 * through the public API of include/rigmat.h (api_run below: load,
 * trim, linearize, discretize, analyze, simulate, export) with the n-th
 * allocation failing,
 * for n = 1, 2, ... until a run reaches its end without meeting the failure.
 * Every run that met it must return RIGMAT_ENOMEM (the program's exit 4),
 * not another status, not a crash, and must leave nothing allocated:
 * LeakSanitizer checks after every run (__lsan_do_recoverable_leak_check).
 * The runs go on in a child process, and a new child takes over after a
 * leak or a crash, so each is reported once, by the run that caused it,
 * and cannot stop the others.
 *
 * The failure is injected by link-time wrapping of the allocation entry
 * points (tests/oomwrap.c).
 */
#include "oomwrap.h"
#include "pipeline.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_errno.h>
#include <sanitizer/lsan_interface.h>
#include <sys/types.h>
#include <sys/wait.h>
#include <unistd.h>

/* Run through the public API alone, as a program embedding librigmat
 * does; every handle freed.  *where names the step that failed. */
static rigmat_status api_run(const char *file, const char *catalog, const char **where)
{
    rigmat_diags *d = rigmat_diags_new();
    rigmat_source *src = rigmat_source_new(file);
    rigmat_model *m = NULL;
    rigmat_steady *t = NULL;
    rigmat_linear *l = NULL;
    rigmat_sampled *smp = NULL;
    rigmat_analysis *an = NULL;
    rigmat_response *r = NULL;
    rigmat_run_spec spec;
    rigmat_status st = RIGMAT_OK;
    FILE *sink = fopen("/dev/null", "w");

    memset(&spec, 0, sizeof spec);
    spec.model = "linear";
    spec.duration_s = 0.05;
    spec.step_s = 0.01;
    *where = "api: source";
    if (d == NULL || src == NULL || sink == NULL)
        st = RIGMAT_ENOMEM;
    if (st == RIGMAT_OK)
        st = rigmat_source_catalog(src, catalog);
    if (st == RIGMAT_OK && (*where = "api: load", 1))
        st = rigmat_source_load(src, &m, d);
    if (st == RIGMAT_OK && (*where = "api: trim", 1))
        st = rigmat_model_trim(m, &t, d);
    if (st == RIGMAT_OK && (*where = "api: linearize", 1))
        st = rigmat_model_linearize(m, &l, d);
    if (st == RIGMAT_OK && (*where = "api: discretize", 1))
        st = rigmat_linear_discretize(l, 200.0, NULL, &smp, d);
    if (st == RIGMAT_OK && (*where = "api: analyze", 1))
        st = rigmat_linear_analyze(l, 0.005, &an, d);
    if (st == RIGMAT_OK && (*where = "api: simulate", 1))
        st = rigmat_linear_simulate(l, &spec, &r, d);
    if (st == RIGMAT_OK && (*where = "api: export", 1))
        st = rigmat_sampled_export(smp, "json", NULL, sink, d);
    if (st == RIGMAT_OK && (*where = "api: export c", 1))
        st = rigmat_linear_export(l, "c", NULL, sink, d);
    if (sink != NULL)
        fclose(sink);
    rigmat_response_free(r);
    rigmat_analysis_free(an);
    rigmat_sampled_free(smp);
    rigmat_linear_free(l);
    rigmat_steady_free(t);
    rigmat_model_free(m);
    rigmat_source_free(src);
    rigmat_diags_free(d);
    return st;
}

static int use_api; /* --api: run api_run instead of pipe_run */

/* What a run reports to the parent. */
struct outcome {
    unsigned long n;     /* the allocation that failed */
    unsigned long calls; /* allocations counted */
    rigmat_status st;
    int leaked;
    char where[32];
};

/* In a child process, run the pipeline on file with allocation n failing
 * for n = start, start + 1, ..., writing an outcome per run to fd, until a
 * run leaks (later leak checks would report the same blocks again) or
 * reaches its end without meeting the failure. */
static void child_runs(const char *file, const char *catalog, unsigned long start, int fd)
{
    unsigned long n;

    for (n = start;; n++) {
        const char *where = "";
        struct outcome r;
        memset(&r, 0, sizeof r);
        r.n = n;
        oom_arm(n);
        r.st = use_api ? api_run(file, catalog, &where)
                       : pipe_run(file, catalog, NULL, NULL, &where);
        r.calls = oom_calls();
        oom_arm(0);
        snprintf(r.where, sizeof r.where, "%s", where);
        r.leaked = __lsan_do_recoverable_leak_check() != 0;
        if (write(fd, &r, sizeof r) != (ssize_t)sizeof r)
            _exit(3);
        if (r.leaked || r.calls < n)
            _exit(0);
    }
}

/* Every allocation of one model's run failed in turn; returns the failures
 * found and sets *allocations to the count of a run without a failure. */
static unsigned long one_model(const char *file, const char *catalog, unsigned long *allocations,
        unsigned long *runs)
{
    unsigned long failures = 0, next = 1;
    int done = 0;

    *allocations = 0;
    while (!done && failures <= 40) {
        int fds[2], cs = 0;
        unsigned long last = next - 1;
        struct outcome o;
        pid_t pid;

        if (pipe(fds) != 0) {
            perror("oom: pipe");
            return failures + 1;
        }
        fflush(stdout);
        fflush(stderr);
        pid = fork();
        if (pid < 0) {
            perror("oom: fork");
            return failures + 1;
        }
        if (pid == 0) {
            close(fds[0]);
            child_runs(file, catalog, next, fds[1]);
            _exit(0);
        }
        close(fds[1]);
        while (read(fds[0], &o, sizeof o) == (ssize_t)sizeof o) {
            (*runs)++;
            last = o.n;
            if (o.leaked) {
                fprintf(stderr, "oom: %s: allocation %lu failed: leak (report above), "
                        "status '%s' at %s\n", file, o.n, rigmat_status_name(o.st), o.where);
                failures++;
            }
            if (o.calls < o.n) { /* the run never reached the n-th allocation */
                *allocations = o.calls;
                if (o.st != RIGMAT_OK) {
                    fprintf(stderr, "oom: %s: the run without a failure gives %s at %s\n", file,
                            rigmat_status_name(o.st), o.where);
                    failures++;
                }
                done = 1;
            } else if (o.st != RIGMAT_ENOMEM) {
                fprintf(stderr, "oom: %s: allocation %lu of %lu failed: status '%s' at %s, "
                        "want 'out of memory'\n", file, o.n, o.calls, rigmat_status_name(o.st),
                        o.where);
                failures++;
            }
        }
        close(fds[0]);
        waitpid(pid, &cs, 0);
        if (!done && (!WIFEXITED(cs) || WEXITSTATUS(cs) != 0)) {
            /* the run after the last one reported crashed */
            (*runs)++;
            fprintf(stderr, "oom: %s: allocation %lu failed: the run crashed (%s %d)\n", file,
                    last + 1, WIFSIGNALED(cs) ? "signal" : "exit",
                    WIFSIGNALED(cs) ? WTERMSIG(cs) : WEXITSTATUS(cs));
            failures++;
            last++;
        }
        next = last + 1;
    }
    return failures;
}

int main(int argc, char **argv)
{
    unsigned long failures = 0, runs = 0;
    int a;

    if (argc > 1 && strcmp(argv[1], "--api") == 0) {
        use_api = 1;
        argc--;
        argv++;
    }
    if (argc < 3) {
        fprintf(stderr, "usage: oom [--api] CATALOG MODEL.yaml...\n");
        return 2;
    }
    gsl_set_error_handler_off();
    for (a = 2; a < argc; a++) {
        unsigned long allocations;
        const unsigned long f = one_model(argv[a], argv[1], &allocations, &runs);
        printf("oom: %s%s: %lu allocations, each failed in turn: %s\n", use_api ? "api: " : "",
                argv[a], allocations,
                f ? "FAILURES above" : "out of memory every time, nothing leaked");
        failures += f;
    }
    printf("oom: %lu runs, %lu failures\n", runs, failures);
    return failures == 0 ? 0 : 1;
}
