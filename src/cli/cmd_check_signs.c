/* cmd_check_signs.c - the sign table `rigmat check` prints (README.md,
 * "Signs and frames", worked example): for each input, the sign of the first
 * non-zero response of every coordinate and every sensor, from the
 * linearization at the operating point (rigmat_lti_first_response).
 * A coordinate's entry is its acceleration's sign when the input reaches
 * the acceleration directly (order 2), else the first derivative that
 * moves; a sensor's order 0 means the input reaches it directly (D). */
#include "cli.h"
#include "linearize.h"

#include <stdlib.h>
#include <string.h>

struct sign_row {
    const char *name;
    int is_output;
    size_t index; /* state or output */
};

static const char *sign_char(int s)
{
    return s > 0 ? "+" : s < 0 ? "-" : "0";
}

static int row_sign(const rigmat_lti *l, const struct sign_row *r, size_t k, double *row,
        int *order)
{
    size_t i;
    double d = 0.0;

    for (i = 0; i < l->nx; i++)
        row[i] = r->is_output ? gsl_matrix_get(l->C, r->index, i) : (i == r->index ? 1.0 : 0.0);
    if (r->is_output && l->D != NULL)
        d = gsl_matrix_get(l->D, r->index, k);
    return rigmat_lti_first_response(l, row, d, k, order);
}

void check_sign_table(struct cli_env *env, const rigmat_model *m, rigmat_result *r)
{
    const rigmat_layout *L = &m->layout;
    rigmat_lti *l = NULL;
    rigmat_error e;
    struct sign_row *rows = NULL;
    double *row = NULL;
    size_t nr = 0, i, k;
    char *text = NULL;
    size_t tlen = 0;
    FILE *f = NULL;

    memset(&e, 0, sizeof e);
    rigmat_result_key(r, "sign_table");
    if (rigmat_linearize(m, &env->opt, &l, NULL, &e) != RIGMAT_OK) {
        rigmat_result_null(r);
        rigmat_result_as_text(r, "\nsign table: not available: %s\n", e.message);
        return;
    }
    rows = calloc(L->nx + L->ny + 1, sizeof *rows);
    row = calloc(L->nx + 1, sizeof *row);
    f = open_memstream(&text, &tlen);
    if (rows == NULL || row == NULL || f == NULL) {
        r->status = RIGMAT_ENOMEM;
        goto done;
    }
    for (i = 0; i < L->nx; i++)
        if (L->states[i].kind == RIGMAT_SIG_COORD) {
            rows[nr].name = m->joints[L->states[i].index].name;
            rows[nr].is_output = 0;
            rows[nr++].index = i;
        }
    for (i = 0; i < L->ny; i++) {
        rows[nr].name = L->outputs[i].name;
        rows[nr].is_output = 1;
        rows[nr++].index = i;
    }
    /* the JSON: inputs, then a row per coordinate and sensor */
    rigmat_result_object(r);
    rigmat_result_key(r, "inputs");
    rigmat_result_array(r);
    for (k = 0; k < L->nu; k++)
        rigmat_result_string(r, L->inputs[k].name);
    rigmat_result_close(r);
    rigmat_result_key(r, "rows");
    rigmat_result_array(r);
    for (i = 0; i < nr; i++) {
        int order;
        rigmat_result_object(r);
        rigmat_result_key(r, "name");
        rigmat_result_string(r, rows[i].name);
        rigmat_result_key(r, "kind");
        rigmat_result_string(r, rows[i].is_output ? "sensor" : "coordinate");
        rigmat_result_key(r, "signs");
        rigmat_result_array(r);
        for (k = 0; k < L->nu; k++)
            rigmat_result_string(r, sign_char(row_sign(l, &rows[i], k, row, &order)));
        rigmat_result_close(r);
        rigmat_result_key(r, "orders");
        rigmat_result_array(r);
        for (k = 0; k < L->nu; k++) {
            (void)row_sign(l, &rows[i], k, row, &order);
            rigmat_result_integer(r, order);
        }
        rigmat_result_close(r);
        rigmat_result_close(r);
    }
    rigmat_result_close(r);
    rigmat_result_close(r);
    /* the same table, laid out for people */
    fputs("\nsign table: the first response to a positive input, with its derivative order\n"
          "(coordinates: 2 = the acceleration; sensors: 0 = reached directly)\n", f);
    fprintf(f, "  %-20s", "");
    for (k = 0; k < L->nu; k++)
        fprintf(f, " %12.12s", L->inputs[k].name);
    fputc('\n', f);
    for (i = 0; i < nr; i++) {
        char label[64];
        snprintf(label, sizeof label, "%s%s", rows[i].name, rows[i].is_output ? "" : " (coord)");
        fprintf(f, "  %-20s", label);
        for (k = 0; k < L->nu; k++) {
            int order, s = row_sign(l, &rows[i], k, row, &order);
            char cell[16];
            if (s == 0)
                snprintf(cell, sizeof cell, "0");
            else
                snprintf(cell, sizeof cell, "%s (%d)", sign_char(s), order);
            fprintf(f, " %12s", cell);
        }
        fputc('\n', f);
    }
    if (fclose(f) != 0)
        r->status = RIGMAT_ENOMEM;
    f = NULL;
    rigmat_result_as_text(r, "%s", text != NULL ? text : "");
done:
    if (f != NULL)
        fclose(f);
    free(text);
    free(rows);
    free(row);
    rigmat_lti_free(l);
}
