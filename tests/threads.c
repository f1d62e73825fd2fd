/* threads.c - the library on four threads gives, byte for byte, what it
 * gives on one (`make check-tsan`, built with ThreadSanitizer).
 *
 *     threads CATALOG MODEL.yaml...
 *
 * First every model runs through the whole pipeline (tests/pipeline.c) on
 * the main thread; the records are the reference.  Then four threads run
 * every model ROUNDS times.  In the even rounds all threads take the models
 * in the same order and use one copy of each, loaded beforehand and shared
 * read-only (what rigmat.h's THREAD SAFETY section allows), so the same
 * model is in use by several threads at once; in the odd rounds each
 * thread starts at a different model and loads its own copy, so loading
 * runs concurrently too.  Every record must equal the reference, and
 * ThreadSanitizer reports any data race.
 *
 * GSL's error handler is process-wide and is switched off once, before
 * any thread starts (rigmat.h).
 */
#include "pipeline.h"

#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_errno.h>

#define NTHREADS 4
#define ROUNDS 4

struct job {
    const char *catalog;
    char **files;
    size_t nfiles;
    rigmat_model **shared;      /* per file, loaded by main; NULL if it failed */
    pipe_record *ref;           /* per file */
    rigmat_status *ref_status;  /* per file */
};

struct worker {
    const struct job *job;
    size_t id;
    size_t runs, mismatches;
    pthread_t thread;
};

static void *work(void *arg)
{
    struct worker *w = arg;
    const struct job *j = w->job;
    size_t round, k;

    for (round = 0; round < ROUNDS; round++) {
        for (k = 0; k < j->nfiles; k++) {
            const int even = round % 2 == 0;
            const size_t f = even ? k : (k + w->id) % j->nfiles;
            const int use_shared = even && j->shared[f] != NULL;
            pipe_record rec;
            rigmat_status st;

            memset(&rec, 0, sizeof rec);
            st = pipe_run(j->files[f], j->catalog, use_shared ? j->shared[f] : NULL, &rec, NULL);
            w->runs++;
            if (st != j->ref_status[f] || rec.len != j->ref[f].len ||
                    (rec.len > 0 && memcmp(rec.bytes, j->ref[f].bytes, rec.len) != 0)) {
                w->mismatches++;
                fprintf(stderr, "threads: thread %zu, %s (%s model): status %d, %zu bytes; "
                        "one thread gave status %d, %zu bytes\n", w->id, j->files[f],
                        use_shared ? "shared" : "own", (int)st, rec.len, (int)j->ref_status[f],
                        j->ref[f].len);
            }
            pipe_record_release(&rec);
        }
    }
    return NULL;
}

int main(int argc, char **argv)
{
    struct job job;
    struct worker workers[NTHREADS];
    size_t i, runs = 0, bad = 0, ok_models = 0;
    int rc = 0;

    if (argc < 3) {
        fprintf(stderr, "usage: threads CATALOG MODEL.yaml...\n");
        return 2;
    }
    gsl_set_error_handler_off();
    memset(&job, 0, sizeof job);
    job.catalog = argv[1];
    job.files = argv + 2;
    job.nfiles = (size_t)argc - 2;
    job.shared = calloc(job.nfiles, sizeof *job.shared);
    job.ref = calloc(job.nfiles, sizeof *job.ref);
    job.ref_status = calloc(job.nfiles, sizeof *job.ref_status);
    if (job.shared == NULL || job.ref == NULL || job.ref_status == NULL) {
        fprintf(stderr, "threads: out of memory\n");
        return 4;
    }
    for (i = 0; i < job.nfiles; i++) {
        rigmat_options opt = rigmat_options_default();
        rigmat_diags d;
        const char *where = "";

        job.ref_status[i] = pipe_run(job.files[i], job.catalog, NULL, &job.ref[i], &where);
        if (job.ref_status[i] == RIGMAT_OK)
            ok_models++;
        else
            fprintf(stderr, "threads: %s: %s on one thread (%s); compared as such\n",
                    job.files[i], rigmat_status_name(job.ref_status[i]), where);
        opt.catalog_dir = job.catalog;
        rigmat_diags_init(&d);
        if (rigmat_model_load(job.files[i], NULL, 0, &opt, &job.shared[i], &d) != RIGMAT_OK)
            job.shared[i] = NULL;
        /* shared read-only from here on: complete it (closed loops) first */
        else if (rigmat_model_check_equations(job.shared[i], &d) != RIGMAT_OK) {
            rigmat_model_free(job.shared[i]);
            job.shared[i] = NULL;
        }
        rigmat_diags_release(&d);
    }
    for (i = 0; i < NTHREADS; i++) {
        workers[i].job = &job;
        workers[i].id = i;
        workers[i].runs = workers[i].mismatches = 0;
        if (pthread_create(&workers[i].thread, NULL, work, &workers[i]) != 0) {
            fprintf(stderr, "threads: cannot start thread %zu\n", i);
            return 4;
        }
    }
    for (i = 0; i < NTHREADS; i++) {
        pthread_join(workers[i].thread, NULL);
        runs += workers[i].runs;
        bad += workers[i].mismatches;
    }
    for (i = 0; i < job.nfiles; i++) {
        rigmat_model_free(job.shared[i]);
        pipe_record_release(&job.ref[i]);
    }
    free(job.shared);
    free(job.ref);
    free(job.ref_status);
    if (ok_models == 0) {
        fprintf(stderr, "threads: no model ran through the pipeline; nothing was compared\n");
        rc = 1;
    }
    if (bad > 0)
        rc = 1;
    printf("threads: %zu models (%zu through the whole pipeline), %d threads, %zu runs, "
           "%zu differ from one thread\n", job.nfiles, ok_models, NTHREADS, runs, bad);
    return rc;
}
