/* model.c - freeing a model and finding its parts by name.  A model is
 * built by rigmat_model_load (load.c); everything in it is owned by it. */
#include "rigmat_internal.h"

#include <stdlib.h>
#include <string.h>

static void free_namelist(rigmat_namelist *l)
{
    size_t i;

    for (i = 0; i < l->count; i++)
        free(l->names[i]);
    free(l->names);
    free(l->locs);
}

static void free_settings(rigmat_setting *s, size_t n)
{
    size_t i;

    for (i = 0; i < n; i++)
        free(s[i].name);
    free(s);
}

void rigmat_model_free(rigmat_model *m)
{
    size_t i;

    if (m == NULL)
        return;
    for (i = 0; i < m->nbodies; i++)
        free(m->bodies[i].name);
    free(m->bodies);
    for (i = 0; i < m->njoints; i++)
        free(m->joints[i].name);
    free(m->joints);
    for (i = 0; i < m->nsprings; i++)
        free(m->springs[i].name);
    free(m->springs);
    for (i = 0; i < m->ndampers; i++)
        free(m->dampers[i].name);
    free(m->dampers);
    for (i = 0; i < m->nmotors; i++) {
        free(m->motors[i].name);
        free(m->motors[i].part);
    }
    free(m->motors);
    for (i = 0; i < m->nforces; i++)
        free(m->forces[i].name);
    free(m->forces);
    for (i = 0; i < m->nsensors; i++)
        free(m->sensors[i].name);
    free(m->sensors);
    free_settings(m->op_coordinates, m->nop_coordinates);
    free_settings(m->op_rates, m->nop_rates);
    free_settings(m->op_inputs, m->nop_inputs);
    free_namelist(&m->op_solve);
    free_namelist(&m->order_states);
    free_namelist(&m->order_inputs);
    free_namelist(&m->order_outputs);
    free_namelist(&m->independent);
    for (i = 0; i < m->nclosures; i++)
        free(m->closures[i].name);
    free(m->closures);
    rigmat_layout_release(&m->layout);
    if (m->owner_diags != NULL) {
        rigmat_diags_release(m->owner_diags);
        free(m->owner_diags);
    }
    free(m->name);
    free(m->file);
    free(m);
}

size_t rigmat_model_body(const rigmat_model *m, const char *name)
{
    size_t i;

    for (i = 0; i < m->nbodies; i++)
        if (m->bodies[i].name != NULL && strcmp(m->bodies[i].name, name) == 0)
            return i;
    return RIGMAT_NONE;
}

size_t rigmat_model_joint(const rigmat_model *m, const char *name)
{
    size_t i;

    for (i = 0; i < m->njoints; i++)
        if (m->joints[i].name != NULL && strcmp(m->joints[i].name, name) == 0)
            return i;
    return RIGMAT_NONE;
}

size_t rigmat_model_motor(const rigmat_model *m, const char *name)
{
    size_t i;

    for (i = 0; i < m->nmotors; i++)
        if (m->motors[i].name != NULL && strcmp(m->motors[i].name, name) == 0)
            return i;
    return RIGMAT_NONE;
}
