/* equations.c - the checks of a loaded model that need its equations of
 * motion f(x, u), h(x, u): that they can be built (driven joints give every
 * derivative the model needs) and that a `states` list leaves out only
 * cyclic coordinates.  They run after loading, in this stage, so that the
 * model stage never builds the mechanics (see rigmat_model_check_equations
 * in src/util/rigmat_internal.h). */
#include "equations.h"
#include "closure.h"
#include "sizes.h"

#include <stdlib.h>
#include <string.h>

/* Whether canonical state k's column of df/dx and dh/dx is exactly zero at
 * the operating point and at a second, generic point: the coordinate
 * appears in no equation (the complex step gives exact zeros there). */
static rigmat_status is_cyclic(rigmat_mech *s, size_t k, int *cyclic, rigmat_error *err)
{
    const rigmat_layout *L = rigmat_mech_canonical(s);
    double *x = NULL, *u = NULL, *A = NULL, *C = NULL;
    rigmat_status st;
    size_t i, pass;

    *cyclic = 1;
    x = calloc(L->nx + 1, sizeof *x);
    u = calloc(L->nu + 1, sizeof *u);
    A = calloc(rigmat_size_mul_add(L->nx, L->nx, 1), sizeof *A);
    C = calloc(rigmat_size_mul_add(L->ny, L->nx, 1), sizeof *C);
    if (x == NULL || u == NULL || A == NULL || C == NULL) {
        st = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
        goto done;
    }
    st = rigmat_mech_operating_point(s, x, u, err);
    for (pass = 0; pass < 2 && st == RIGMAT_OK && *cyclic; pass++) {
        if (pass == 1)
            for (i = 0; i < L->nx; i++)
                x[i] += 0.0517 * (double)(i + 1);
        st = rigmat_mech_jacobians(s, x, u, A, NULL, C, NULL, NULL, NULL, err);
        for (i = 0; i < L->nx && st == RIGMAT_OK; i++)
            if (A[i * L->nx + k] != 0.0)
                *cyclic = 0;
        for (i = 0; i < L->ny && st == RIGMAT_OK; i++)
            if (C[i * L->nx + k] != 0.0)
                *cyclic = 0;
    }
done:
    free(x);
    free(u);
    free(A);
    free(C);
    return st;
}

/* Whether the model's (built) layout holds a state of this kind and index. */
static int layout_has(const rigmat_layout *L, rigmat_signal_kind kind, size_t index)
{
    size_t i;
    for (i = 0; i < L->nx; i++)
        if (L->states[i].kind == kind && L->states[i].index == index)
            return 1;
    return 0;
}

static rigmat_loc states_list_loc(const rigmat_model *m)
{
    rigmat_loc none = { NULL, 0, 0 };
    if (m->order_states.locs == NULL || m->order_states.count == 0)
        return none;
    return m->order_states.locs[0];
}

rigmat_status rigmat_mech_next_noncyclic(const rigmat_model *m, rigmat_mech *s, size_t *from,
        rigmat_error *err)
{
    const rigmat_layout *C = rigmat_mech_canonical(s);
    size_t k;

    if (m->order_states.count == 0) {
        *from = RIGMAT_NONE;
        return RIGMAT_OK;
    }
    for (k = *from; k < C->nx; k++) {
        int cyc = 0;
        rigmat_status st;
        if (C->states[k].kind != RIGMAT_SIG_COORD ||
                layout_has(&m->layout, RIGMAT_SIG_COORD, C->states[k].index))
            continue;
        st = is_cyclic(s, k, &cyc, err);
        if (st != RIGMAT_OK)
            return st;
        if (!cyc) {
            *from = k;
            return RIGMAT_OK;
        }
    }
    *from = RIGMAT_NONE;
    return RIGMAT_OK;
}

static rigmat_status error_to_diag(rigmat_diags *d, const rigmat_error *e)
{
    if (d == NULL)
        return e->status;
    if (rigmat_diags_add(d, RIGMAT_ERROR, e->where, e->within, NULL,
                e->hint[0] ? e->hint : NULL, "%s", e->message) != RIGMAT_OK)
        return RIGMAT_ENOMEM;
    return e->status == RIGMAT_ENOMEM ? RIGMAT_ENOMEM : RIGMAT_EMODEL;
}

rigmat_status rigmat_model_check_equations(rigmat_model *m, rigmat_diags *d)
{
    const rigmat_loc none = { NULL, 0, 0 };
    rigmat_error e;
    rigmat_mech *s = NULL;
    rigmat_status st, result = RIGMAT_OK;
    size_t k = 0;

    memset(&e, 0, sizeof e);
    /* closed loops: assemble, choose the independent coordinates, rebuild
     * the layout without the dependent ones */
    st = rigmat_closure_resolve(m, d);
    if (st != RIGMAT_OK)
        return st;
    /* the equations must be buildable whatever the order */
    st = rigmat_mech_alloc(m, &s, &e);
    if (st != RIGMAT_OK)
        return error_to_diag(d, &e);
    for (;;) {
        const rigmat_layout *C = rigmat_mech_canonical(s);
        st = rigmat_mech_next_noncyclic(m, s, &k, &e);
        if (st != RIGMAT_OK) {
            result = error_to_diag(d, &e);
            break;
        }
        if (k == RIGMAT_NONE)
            break;
        result = RIGMAT_EMODEL;
        if (d != NULL && rigmat_diags_add(d, RIGMAT_ERROR, states_list_loc(m), none, NULL,
                    "only a coordinate that appears in no equation (cyclic) may be left out",
                    "the states list leaves out a coordinate that is not cyclic: '%s'",
                    C->states[k].name) != RIGMAT_OK) {
            result = RIGMAT_ENOMEM;
            break;
        }
        k++;
    }
    rigmat_mech_free(s);
    return result;
}
