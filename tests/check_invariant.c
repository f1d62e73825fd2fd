/* check_invariant.c - RIGMAT_ALWAYS / RIGMAT_NEVER (src/util/invariant.h)
 * are on in the test builds and pass through in the shipped one.
 *
 * rigmat_linearize(NULL, ...) breaks an entry-point invariant.  Built with
 * -DRIGMAT_TESTING (build/test, build/san, build/vg) the process must stop
 * with SIGABRT; built without (build/plain) the call returns RIGMAT_EUSAGE.
 * A test that expects a signal would stop the whole runner in Check's
 * no-fork mode (CK_FORK=no, used under valgrind), so that mode leaves the
 * signal case out and says so; `make check-unit` and `make check-san` run
 * it forked. */
#include "rigmat_internal.h"

#include <check.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

START_TEST(test_entry_invariant)
{
    rigmat_options opt = rigmat_options_default();
    rigmat_lti *lti = NULL;
    rigmat_error err;

    memset(&err, 0, sizeof err);
    /* in a test build this call does not return */
    ck_assert_int_eq(rigmat_linearize(NULL, &opt, &lti, NULL, &err), RIGMAT_EUSAGE);
#ifdef RIGMAT_TESTING
    ck_abort_msg("RIGMAT_NEVER did not stop a test build");
#endif
    ck_assert_ptr_null(lti);
}
END_TEST

Suite *invariant_suite(void);
Suite *invariant_suite(void)
{
    Suite *s = suite_create("invariant");
    TCase *tc = tcase_create("macros");
#ifdef RIGMAT_TESTING
    const char *fork = getenv("CK_FORK");

    if (fork != NULL && strcmp(fork, "no") == 0)
        fprintf(stderr, "check_invariant: CK_FORK=no: the SIGABRT case is left out "
                "(it would stop the runner); the forked runs cover it\n");
    else
        tcase_add_test_raise_signal(tc, test_entry_invariant, SIGABRT);
#else
    tcase_add_test(tc, test_entry_invariant);
#endif
    suite_add_tcase(s, tc);
    return s;
}
