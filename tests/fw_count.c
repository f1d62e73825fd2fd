/* fw_count.c - counts the operations of the generated fwm_f and fwm_h
 * (tests/firmware.sh), to hold against the counts rigmat states in fwm.h.
 * Built with a copy of fwm.c whose real-pass macros (SADD ... SSQRT) the
 * script has rewritten to count into fw_ops (add/sub, mul, div, sqrt, sin,
 * cos) before doing the operation; run at the operating point x0, u0 of
 * fwm.h.  Prints the two lines in the header's own form. */
#include "fwm.h"

#include <stdio.h>
#include <string.h>

extern unsigned long fw_ops[6];

static void show(const char *what)
{
    printf(" *   %-15s %lu add/sub, %lu mul, %lu div, %lu sqrt, %lu sin, %lu cos\n", what,
            fw_ops[0], fw_ops[1], fw_ops[2], fw_ops[3], fw_ops[4], fw_ops[5]);
    memset(fw_ops, 0, 6 * sizeof fw_ops[0]);
}

int main(void)
{
    fwm_real xdot[FWM_NX], y[FWM_NY > 0 ? FWM_NY : 1];

    memset(fw_ops, 0, 6 * sizeof fw_ops[0]);
    fwm_f(fwm_x0, fwm_u0, xdot);
    show("f:");
    fwm_h(fwm_x0, fwm_u0, y);
    show("h:");
    return 0;
}
