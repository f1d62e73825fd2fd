/* validity.c - the validity range of the linear model as part of a
 * command's result (`simulate --validity`, `modes --validity`). */
#include "cli.h"
#include "validity.h"

#include <math.h>
#include <stdio.h>

/* The validity table (src/study/validity.h), appended to r: lines of the
 * text layout, then the JSON records "criterion", "horizon" and "validity"
 * (which the text does not show).  Used by `simulate --validity` and
 * `modes --validity`. */
void cli_validity_describe(rigmat_result *r, const rigmat_model *m,
        const struct rigmat_validity_opts *o, const struct rigmat_validity_item *it, size_t n)
{
    const rigmat_signal *xs = m->layout.states, *us = m->layout.inputs;
    size_t k, i;

    rigmat_result_text(r, "validity of the linear model: the largest offset (coordinates) or "
            "step (control inputs)\nfor which the linear response stays within %.3g %% of the "
            "nonlinear one over %.4g s\n(error: max over time and outputs of |y_lin - y_nl| "
            "/ max over time |y_nl - y0|, per output)\n\n",
            100.0 * o->criterion, o->horizon_s);
    for (k = 0; k < n; k++) {
        const rigmat_signal *s = it[k].is_input ? &us[it[k].index] : &xs[it[k].index];
        char name[96];
        snprintf(name, sizeof name, "%s %s [%s]", it[k].is_input ? "step of" : "offset of",
                s->name, s->unit);
        rigmat_result_text(r, "  %-36s ", name);
        if (!it[k].bounded)
            rigmat_result_text(r, "valid up to at least %.3g both ways (the largest size "
                    "tried)\n", it[k].size);
        else if (it[k].size == 0)
            rigmat_result_text(r, "not within the criterion even at %.3g\n",
                    o->start / 1048576.0);
        else
            rigmat_result_text(r, "%.3g (+%.3g / -%.3g)%s\n", it[k].size, it[k].size_pos,
                    it[k].size_neg,
                    it[k].nonlinear_failed ? "; the nonlinear model fails beyond" : "");
    }
    if (n == 0)
        rigmat_result_text(r, "  (no coordinates or control inputs)\n");
    rigmat_result_text(r, "\ncaution: a linear model holds only near its operating point; "
            "check a controller against the nonlinear model.\n");
    rigmat_result_key(r, "criterion");
    rigmat_result_number(r, o->criterion, NULL);
    rigmat_result_key(r, "horizon");
    rigmat_result_number(r, o->horizon_s, "s");
    rigmat_result_key(r, "validity");
    rigmat_result_array(r);
    for (k = 0; k < n; k++) {
        rigmat_result_object(r);
        rigmat_result_key(r, it[k].is_input ? "input" : "state");
        rigmat_result_string(r, it[k].is_input ? us[it[k].index].name : xs[it[k].index].name);
        rigmat_result_key(r, "size");
        rigmat_result_number(r, it[k].size, NULL);
        rigmat_result_key(r, "positive");
        rigmat_result_number(r, it[k].size_pos, NULL);
        rigmat_result_key(r, "negative");
        rigmat_result_number(r, it[k].size_neg, NULL);
        rigmat_result_key(r, "bounded");
        rigmat_result_bool(r, it[k].bounded);
        rigmat_result_key(r, "nonlinear_failed");
        rigmat_result_bool(r, it[k].nonlinear_failed);
        rigmat_result_key(r, "samples");
        rigmat_result_array(r);
        for (i = 0; i < it[k].nsamples; i++) {
            rigmat_result_array(r);
            rigmat_result_number(r, it[k].sample_size[i], NULL);
            if (isfinite(it[k].sample_error[i]))
                rigmat_result_number(r, it[k].sample_error[i], NULL);
            else
                rigmat_result_null(r);
            rigmat_result_close(r);
        }
        rigmat_result_close(r);
        rigmat_result_close(r);
    }
    rigmat_result_close(r);
}

