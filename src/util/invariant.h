/* invariant.h - invariants written as code (the ALWAYS/NEVER idea of
 * SQLite's sqliteInt.h, in our own macros).
 *
 * A defensive check for something believed impossible wraps its condition:
 *
 *     if (RIGMAT_NEVER(gs != GSL_SUCCESS))
 *         return RIGMAT_FAIL(err, RIGMAT_EINTERNAL, "matrix product failed");
 *     if (!RIGMAT_ALWAYS(w->nx >= s->nx))
 *         return RIGMAT_FAIL(err, RIGMAT_EINTERNAL, "workspace too small");
 *
 * In the test builds (-DRIGMAT_TESTING: build/test, build/san, build/vg,
 * build/tsan and the fuzz builds) a broken invariant stops the process at
 * once with the expression and its place, so a test cannot pass over it.
 * In the shipped build (build/plain) the macro is its condition and the
 * defensive branch returns RIGMAT_EINTERNAL (exit 5) as before.
 *
 * Use them for invariants only: sizes that must agree, indices in range,
 * pointers non-NULL at entry points, a layout that matches its system.  A
 * caller's mistake that the documentation promises to report (a bad
 * period, RIGMAT_EUSAGE) is not an invariant: tests provoke those.
 */
#ifndef RIGMAT_INVARIANT_H
#define RIGMAT_INVARIANT_H

/* Print "rigmat: invariant broken: EXPR (FILE:LINE)" to stderr and abort.
 * Only the test builds call it. */
void rigmat_invariant_failed(const char *expr, const char *file, int line);

#ifdef RIGMAT_TESTING
#define RIGMAT_ALWAYS(X) ((X) ? 1 : (rigmat_invariant_failed(#X, __FILE__, __LINE__), 0))
#define RIGMAT_NEVER(X) ((X) ? (rigmat_invariant_failed(#X, __FILE__, __LINE__), 1) : 0)
#else
#define RIGMAT_ALWAYS(X) ((X) ? 1 : 0)
#define RIGMAT_NEVER(X) ((X) ? 1 : 0)
#endif

#endif /* RIGMAT_INVARIANT_H */
