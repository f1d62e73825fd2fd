/* options.c - the documented defaults of every limit and tolerance. */
#include "rigmat_internal.h"

rigmat_options rigmat_options_default(void)
{
    rigmat_options o;

    o.max_file_bytes = (size_t)4 << 20;
    o.max_depth = 32;
    o.max_nodes = 200000;
    o.max_entries = 256;
    o.max_errors = 50;
    o.max_part_depth = 4;
    /* Cost limit until the O(N) dynamics land (issue 10, item 12): on a
     * hinge chain, linearize took 1.3 s at 48 joints and 16-20 s at 64 on
     * the shared 2-core build machine; check and modes grow alike. */
    o.max_joints = 48;
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
     * time and memory grow as the square of the states */
    o.max_sampled_states = 1024;
    o.limits_refuse = 1;
    return o;
}
