/* options.c - the documented defaults of every limit and tolerance. */
#include "rigmat.h"

rigmat_options rigmat_options_default(void)
{
    rigmat_options o;

    o.max_file_bytes = (size_t)4 << 20;
    o.max_depth = 32;
    o.max_nodes = 200000;
    o.max_entries = 256;
    o.max_errors = 50;
    o.max_part_depth = 4;
    o.catalog_dir = NULL;
    o.catalog_env = NULL;
    o.catalog_share = NULL;
    o.catalog_exe = NULL;
    o.trim_tol = 1e-10;
    o.trim_max_iter = 100;
    o.rank_rtol = 1e-9;
    o.rate_hz = 0.0;
    o.limits_refuse = 1;
    return o;
}
