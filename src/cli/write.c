/* write.c - the older writer calls of the commands, as thin wrappers over
 * the emit stage (src/emit/result.h), which holds the JSON emitter and the
 * text tables. */
#include "cli.h"

/* Rows on one line each keeps a matrix readable and the file short. */
void cli_json_matrix(struct cli_json *j, const gsl_matrix *m, size_t rows, size_t cols)
{
    rigmat_json_matrix(j, m, rows, cols);
}

void cli_json_vector(struct cli_json *j, const gsl_vector *v, size_t n)
{
    size_t i;
    const int pretty = j->pretty;

    rigmat_json_arr_open(j);
    j->pretty = 0;
    for (i = 0; i < n; i++)
        rigmat_json_num(j, v != NULL ? gsl_vector_get(v, i) : 0.0);
    rigmat_json_arr_close(j);
    j->pretty = pretty;
}

void cli_json_head(struct cli_json *j, const rigmat_model *m, const char *kind)
{
    const rigmat_layout *l = &m->layout;

    rigmat_json_key(j, "rigmat");
    rigmat_json_str(j, RIGMAT_VERSION);
    rigmat_json_key(j, "model");
    rigmat_json_str(j, m->name ? m->name : "");
    rigmat_json_key(j, "kind");
    rigmat_json_str(j, kind);
    rigmat_json_key(j, "order_hash");
    rigmat_json_str(j, l->order_hash);
    rigmat_json_key(j, "states");
    rigmat_json_signals(j, l->states, l->nx, 0);
    rigmat_json_key(j, "inputs");
    rigmat_json_signals(j, l->inputs, l->nu, 1);
    rigmat_json_key(j, "outputs");
    rigmat_json_signals(j, l->outputs, l->ny, 0);
}

void cli_json_operating_point(struct cli_json *j, const rigmat_lti *l)
{
    rigmat_json_key(j, "operating_point");
    rigmat_json_obj_open(j);
    rigmat_json_key(j, "x");
    cli_json_vector(j, l->x0, l->nx);
    rigmat_json_key(j, "u");
    cli_json_vector(j, l->u0, l->nu);
    rigmat_json_key(j, "y");
    cli_json_vector(j, l->y0, l->ny);
    rigmat_json_obj_close(j);
}

void cli_text_matrix(FILE *f, const char *title, const gsl_matrix *m, const rigmat_signal *rows,
        size_t nrows, const rigmat_signal *cols, size_t ncols)
{
    rigmat_text_matrix(f, title, m != NULL ? m->data : NULL, m != NULL ? m->tda : 0, rows, nrows,
            cols, ncols);
}
