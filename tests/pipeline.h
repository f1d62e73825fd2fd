/* pipeline.h - the whole library pipeline on one model file, for the
 * thread test (tests/threads.c) and the allocation-failure test
 * (tests/oom.c): load, trim (when operating_point.solve names unknowns),
 * linearize, discretize (ZOH at 200 Hz), the noise model, the sampling
 * advice.  Every number it produces goes, as raw bytes, into a record, so
 * two runs can be compared byte for byte. */
#ifndef RIGMAT_TEST_PIPELINE_H
#define RIGMAT_TEST_PIPELINE_H

#include "rigmat_internal.h"

#include <stddef.h>

typedef struct pipe_record {
    unsigned char *bytes;
    size_t len, cap;
    int nomem; /* the record itself ran out of memory */
} pipe_record;

void pipe_record_release(pipe_record *r);

/* Run the pipeline on shared (a model loaded before, read only) or, when
 * shared is NULL, on file loaded here with catalog as --catalog.  rec may
 * be NULL.  Returns RIGMAT_OK or the first failing status; *where (may be
 * NULL) names the step that failed. */
rigmat_status pipe_run(const char *file, const char *catalog, const rigmat_model *shared,
        pipe_record *rec, const char **where);

#endif
