/* layout.h - the state, input and output vectors of a model: names, units,
 * kinds and order (README.md, "Rules worth knowing"), and the order hash.
 *
 * Canonical order: states are the coordinates (joints in file order that
 * have a coordinate state), then the rates (joints with a rate state), then
 * motor currents (motors with a current state, file order), then shaping
 * states of coloured disturbances (in input order); inputs are control
 * inputs then disturbances, each group driven joints, then motors, then
 * forces, in file order; outputs are the sensors in file order.
 * `order: interleaved` pairs each coordinate with its rate.  The optional
 * states/inputs/outputs lists then fix the order by name; `states` may
 * leave out a cyclic coordinate (one whose Jacobian column of f and h is
 * exactly zero).
 *
 * Order hash: FNV-1a 64-bit over, for each state, then input, then output,
 * the bytes of its name, a tab, its unit and a newline, with one '|' byte
 * between the three groups; 16 lowercase hex digits (FNV: G. Fowler,
 * L. C. Noll, K.-P. Vo, "FNV hash", IETF draft-eastlake-fnv, from memory:
 * offset basis 0xcbf29ce484222325, prime 0x100000001b3).
 */
#ifndef RIGMAT_LAYOUT_H
#define RIGMAT_LAYOUT_H

#include "rigmat_internal.h"

/* The canonical layout (no lists applied, interleave ignored) into *l,
 * which it owns afterwards (rigmat_layout_release).  RIGMAT_ENOMEM only. */
rigmat_status rigmat_layout_canonical(const rigmat_model *m, rigmat_layout *l, rigmat_error *err);

/* FNV-1a hash of a layout's order into l->order_hash. */
void rigmat_layout_hash(rigmat_layout *l);

#endif /* RIGMAT_LAYOUT_H */
