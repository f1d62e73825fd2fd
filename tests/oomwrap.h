/* oomwrap.h - the allocation-failure switch of tests/oomwrap.c. */
#ifndef RIGMAT_TEST_OOMWRAP_H
#define RIGMAT_TEST_OOMWRAP_H

/* Count allocations from zero and fail the n-th (0: none). */
void oom_arm(unsigned long n);
/* Allocations counted since oom_arm. */
unsigned long oom_calls(void);

#endif
