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

void check_sign_table(struct cli_env *env, const rigmat_model *m, int json, struct cli_json *j)
{
    const rigmat_layout *L = &m->layout;
    rigmat_lti *l = NULL;
    rigmat_error e;
    struct sign_row *rows = NULL;
    double *row = NULL;
    size_t nr = 0, i, k;
    FILE *f = env->out;

    memset(&e, 0, sizeof e);
    if (rigmat_linearize(m, &env->opt, &l, NULL, &e) != RIGMAT_OK) {
        if (json) {
            cli_json_key(j, "sign_table");
            cli_json_null(j);
        } else {
            fprintf(f, "\nsign table: not available: %s\n", e.message);
        }
        return;
    }
    rows = calloc(L->nx + L->ny + 1, sizeof *rows);
    row = calloc(L->nx + 1, sizeof *row);
    if (rows == NULL || row == NULL)
        goto done;
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
    if (json) {
        cli_json_key(j, "sign_table");
        cli_json_obj_open(j);
        cli_json_key(j, "inputs");
        cli_json_arr_open(j);
        for (k = 0; k < L->nu; k++)
            cli_json_str(j, L->inputs[k].name);
        cli_json_arr_close(j);
        cli_json_key(j, "rows");
        cli_json_arr_open(j);
        for (i = 0; i < nr; i++) {
            cli_json_obj_open(j);
            cli_json_key(j, "name");
            cli_json_str(j, rows[i].name);
            cli_json_key(j, "kind");
            cli_json_str(j, rows[i].is_output ? "sensor" : "coordinate");
            cli_json_key(j, "signs");
            cli_json_arr_open(j);
            for (k = 0; k < L->nu; k++) {
                int order;
                cli_json_str(j, sign_char(row_sign(l, &rows[i], k, row, &order)));
            }
            cli_json_arr_close(j);
            cli_json_key(j, "orders");
            cli_json_arr_open(j);
            for (k = 0; k < L->nu; k++) {
                int order;
                (void)row_sign(l, &rows[i], k, row, &order);
                cli_json_int(j, order);
            }
            cli_json_arr_close(j);
            cli_json_obj_close(j);
        }
        cli_json_arr_close(j);
        cli_json_obj_close(j);
        goto done;
    }
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
done:
    free(rows);
    free(row);
    rigmat_lti_free(l);
}
