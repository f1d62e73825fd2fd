/* equations.h - checks of a loaded model that need its equations of motion
 * (the entry point is rigmat_model_check_equations in src/util/rigmat_internal.h). */
#ifndef RIGMAT_EQUATIONS_H
#define RIGMAT_EQUATIONS_H

#include "rigmat_internal.h"
#include "mechanics.h"

/* The first canonical state at or after *from that the model's layout
 * leaves out and that is not cyclic (its column of df/dx and dh/dx is not
 * exactly zero), into *from; RIGMAT_NONE when there is none.  s holds m's
 * equations. */
rigmat_status rigmat_mech_next_noncyclic(const rigmat_model *m, rigmat_mech *s, size_t *from,
        rigmat_error *err);

#endif /* RIGMAT_EQUATIONS_H */
