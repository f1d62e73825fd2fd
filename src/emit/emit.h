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

/* A C floating literal that converts back to v (17 significant digits, or
 * 9 and the f suffix for float), always with a point or an exponent. */
void rigmat_emit_c_number(char *buf, size_t len, double v, int is_float);
/* An identifier from free text (the c export's rule: letters and digits,
 * lower or upper case, single '_' between words, fallback when empty). */
void rigmat_emit_c_ident(char *buf, size_t len, const char *s, int upper, const char *fallback);

#endif /* RIGMAT_EMIT_H */
