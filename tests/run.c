/* run.c - one SRunner over every suite.  The suite list is generated from
 * the tests/check_*.c files (Makefile: build/suites.h), so adding a suite
 * means adding one file that defines `Suite *<name>_suite(void)`.
 * CK_RUN_SUITE=units or CK_RUN_CASE=... picks a subset (Check reads them). */
#include <check.h>
#include <stdlib.h>
#include <gsl/gsl_errno.h>

#define RIGMAT_SUITE(name) Suite *name##_suite(void);
#include "suites.h"
#undef RIGMAT_SUITE

int main(void)
{
    SRunner *sr;
    int failed;

    gsl_set_error_handler_off();
    sr = srunner_create(NULL);
#define RIGMAT_SUITE(name) srunner_add_suite(sr, name##_suite());
#include "suites.h"
#undef RIGMAT_SUITE
    srunner_run_all(sr, CK_ENV);
    failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed == 0 ? EXIT_SUCCESS : EXIT_FAILURE;
}
