/* emit.h - the writers behind rigmat_result_write (src/emit/result.h) and
 * what they share.  Each takes a result that passed the finiteness check. */
#ifndef RIGMAT_EMIT_H
#define RIGMAT_EMIT_H

#include "result.h"

rigmat_status rigmat_emit_text(const rigmat_result *r, FILE *f, rigmat_error *err);
rigmat_status rigmat_emit_json(const rigmat_result *r, FILE *f, rigmat_error *err);
rigmat_status rigmat_emit_csv(const rigmat_result *r, const rigmat_emit_opts *o, FILE *f,
        rigmat_error *err);
rigmat_status rigmat_emit_c(const rigmat_result *r, const rigmat_emit_opts *o, FILE *f,
        rigmat_error *err);
rigmat_status rigmat_emit_numpy(const rigmat_result *r, const rigmat_emit_opts *o, FILE *f,
        rigmat_error *err);
rigmat_status rigmat_emit_mtx(const rigmat_result *r, const rigmat_emit_opts *o,
        const rigmat_emit_sink *sink, rigmat_error *err);
rigmat_status rigmat_emit_latex(const rigmat_result *r, const rigmat_emit_opts *o, FILE *f,
        rigmat_error *err);

#endif /* RIGMAT_EMIT_H */
