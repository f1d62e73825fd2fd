/* options.c - the documented defaults of every limit and tolerance. */
#include "rigmat_internal.h"

rigmat_options rigmat_options_default(void)
{
    rigmat_options o;

    o.max_file_bytes = (size_t)4 << 20;
    o.max_depth = 32;
    o.max_nodes = 200000;
    /* 1000-body models load (issue 14): a lumped shaft or beam */
    o.max_entries = 1024;
    o.max_errors = 50;
    o.max_part_depth = 4;
    /* Cost limit.  With the O(N) dynamics (src/mech/recursive.c) linearize
     * of a 1000-link pendulum chain took 6.7 s and of a 1000-mass chain
     * 3.1 s on the shared 2-core build machine, growing as N^2; a model the
     * recursion does not handle keeps the mass-matrix limit,
     * RIGMAT_MECH_MASS_MATRIX_MAX coordinates (src/mech/mechanics.h).  It
     * equals max_entries, so by default a joints section meets that first. */
    o.max_joints = 1024;
    o.catalog_dir = NULL;
    o.catalog_env = NULL;
    o.catalog_share = NULL;
    o.catalog_exe = NULL;
    o.trim_tol = 1e-10;
    o.trim_max_iter = 100;
    o.rank_rtol = 1e-9;
    o.rate_hz = 0.0;
    /* measured (discretize examples/balancer.yaml --rate 1kHz --delay N, the
     * output to a file, on a loaded 2-core machine): 512 states 1.1 s and
     * 28 MB, 1024 states 4.0 s and 90 MB, 2048 states 16 s and 340 MB;
     * time and memory grow as the square of the states; 2048 takes the
     * 1000-body chains (2000 states) */
    o.max_sampled_states = 2048;
    o.limits_refuse = 1;
    return o;
}
