/* units.h - quantities with units: "0.8 kg", "3.3 g*cm^2", "0.005 deg/s/sqrt(Hz)".
 *
 * Grammar (whitespace allowed between tokens):
 *   quantity := number [unit]            a bare number is SI
 *   unit     := term { ('*' | '/' | ' ') term }     left to right: a/b/c = a/(b*c)
 *   term     := factor [ '^' exponent ]
 *   factor   := symbol | 'sqrt' '(' unit ')' | '(' unit ')' | '1'
 *   exponent := ['-'] integer | ['-'] integer '/' '2'  (also in parentheses)
 *   symbol   := [SI prefix] name        e.g. mm, ug0, krpm, mH, kgf
 *
 * Dimensions: mass, length, time, current, angle, cycle (rigmat.h).  Angle
 * and cycle are base dimensions of their own: rad, deg and rev are angles,
 * rpm is an angle per time (2*pi/60 rad/s exactly), Hz is a cycle per time.
 * A field that wants an angular rate does not take Hz, and the reverse;
 * 2*pi enters only where a field asks for it (rigmat_units_expect_flags with
 * RIGMAT_UNITS_CYCLE_AS_ANGLE).
 *
 * Exact definitions used (NIST SP 811, 2008 edition, Appendix B):
 *   in = 0.0254 m, ft = 0.3048 m, lb = 0.45359237 kg, oz = lb/16,
 *   g0 = 9.80665 m/s^2, kgf = kg*g0, gf = g*g0, lbf = lb*g0, ozf = oz*g0.
 * `g` is the gram; `g0` is standard gravity.
 */
#ifndef RIGMAT_UNITS_H
#define RIGMAT_UNITS_H

#include "rigmat_internal.h"

/* Named dimensions a field can expect, for messages and hints. */
typedef enum rigmat_kind {
    RIGMAT_Q_NUMBER,        /* dimensionless (gain ratio, efficiency, duty) */
    RIGMAT_Q_MASS,          /* kg */
    RIGMAT_Q_LENGTH,        /* m */
    RIGMAT_Q_TIME,          /* s */
    RIGMAT_Q_ANGLE,         /* rad */
    RIGMAT_Q_FREQUENCY,     /* Hz (cycle/s) */
    RIGMAT_Q_ANGULAR_RATE,  /* rad/s */
    RIGMAT_Q_VELOCITY,      /* m/s */
    RIGMAT_Q_ACCELERATION,  /* m/s^2 */
    RIGMAT_Q_ANGULAR_ACCEL, /* rad/s^2 */
    RIGMAT_Q_FORCE,         /* N */
    RIGMAT_Q_TORQUE,        /* N*m (per rad of rotation is implied: N*m, not N*m/rad) */
    RIGMAT_Q_INERTIA,       /* kg*m^2 */
    RIGMAT_Q_VOLTAGE,       /* V */
    RIGMAT_Q_CURRENT,       /* A */
    RIGMAT_Q_RESISTANCE,    /* ohm */
    RIGMAT_Q_INDUCTANCE,    /* H */
    RIGMAT_Q_TORQUE_CONSTANT, /* N*m/A */
    RIGMAT_Q_BACK_EMF,      /* V*s/rad */
    RIGMAT_Q_LIN_STIFFNESS, /* N/m */
    RIGMAT_Q_ROT_STIFFNESS, /* N*m/rad */
    RIGMAT_Q_LIN_DAMPING,   /* N*s/m */
    RIGMAT_Q_ROT_DAMPING,   /* N*m*s/rad */
    RIGMAT_Q_LEAD,          /* m per turn: m/rev */
    RIGMAT_Q_COUNT
} rigmat_kind;

/* Parse text into q (SI value and dimension).  On failure returns
 * RIGMAT_EMODEL and fills err->message and err->hint; err->where.col is set
 * to the 1-based character offset of the problem inside text (0 if none). */
rigmat_status rigmat_units_parse(const char *text, rigmat_quantity *q, rigmat_error *err);

/* Parse text as a quantity of the expected kind, returning its SI value.
 * Accepts a dimensionally equal unit; a bare number means SI.  A mismatch
 * returns RIGMAT_EMODEL with "expected a mass (kg), got a length (m)" and a
 * hint where one helps ("did you mean kgf*cm?", "Hz is a cycle rate: write
 * rad/s or rpm"). */
rigmat_status rigmat_units_expect(const char *text, rigmat_kind kind, double *value_si,
        rigmat_error *err);

/* Flags for rigmat_units_expect_flags. */
typedef enum rigmat_units_flags {
    RIGMAT_UNITS_PER_SQRT_HZ = 1 << 0,    /* expect the kind divided by sqrt(Hz) (a density) */
    RIGMAT_UNITS_CYCLE_AS_ANGLE = 1 << 1  /* let cycles stand for angles: 1 cycle = 2*pi rad, so
                                           * 5 Hz gives 31.4 rad/s; only for a field whose
                                           * documentation says so */
} rigmat_units_flags;

/* rigmat_units_expect with flags (a bitwise or of rigmat_units_flags);
 * rigmat_units_expect is this with 0, rigmat_units_expect_density with
 * RIGMAT_UNITS_PER_SQRT_HZ.  Statuses as for rigmat_units_expect. */
rigmat_status rigmat_units_expect_flags(const char *text, rigmat_kind kind, unsigned flags,
        double *value_si, rigmat_error *err);

/* Like rigmat_units_expect, for a dimension built from a kind: the kind
 * divided by sqrt(Hz) when per_sqrt_hz is set (a noise density such as
 * N/sqrt(Hz) or rad/s/sqrt(Hz)).  Messages name the composed unit.  A
 * density may also be written per sqrt(s) inverted, as sheets give an
 * angle random walk (deg/sqrt(h)): 1/sqrt(Hz) is read as sqrt(s). */
rigmat_status rigmat_units_expect_density(const char *text, rigmat_kind kind, double *value_si,
        rigmat_error *err);

/* Interchangeable pairs that expect() accepts, stated once here:
 *   TORQUE_CONSTANT (N*m/A) and BACK_EMF (V*s/rad) take each other's unit
 *     (equal in SI once the radian is dropped) and the reciprocal speed
 *     constant (rpm/V, rad/s/V), which is inverted;
 *   LEAD takes m/rev (any length per angle) and a plain length, read as per
 *     turn;
 *   ROT_STIFFNESS / ROT_DAMPING also take N*m and N*m*s (per radian implied);
 *   INERTIA also takes a per-radian form (N*m*s^2/rad).
 *
 * The value returned is in the unit of rigmat_units_kind_symbol(kind): SI
 * for every kind except LEAD, whose value is metres per turn (what
 * rigmat_motor.lead_m holds): "4 mm/rev", "4 mm" and a bare 0.004 all give
 * 0.004.
 *
 * Details every caller may rely on:
 *   - a unit alone ("kgf*cm", "rpm/V") stands for one of it;
 *   - a symbol is matched whole before prefix + unit, so min is the minute
 *     (not a milli-inch), h the hour and there is no hecto; prefixes are
 *     p n u (also the micro sign and mu) m c d k M G, and apply to the SI
 *     units and to g, gf, g0, Hz, rpm, ohm (krpm, ug0, mohm);
 *   - a product needs '*' or a space: Nm is refused with "write N*m", so
 *     mN (millinewton) and N*m never meet;
 *   - nan, inf, a number beyond the double range and a value longer than
 *     256 bytes are errors; parentheses and sqrt nest at most 16 deep;
 *   - on an error err->where.col is set; where.file and where.line are
 *     left as the caller set them, so a loader may fill them first.
 */

/* The dimension of a kind, its words ("a mass") and its SI symbol ("kg"). */
rigmat_dim rigmat_units_dim(rigmat_kind kind);
const char *rigmat_units_kind_words(rigmat_kind kind);
const char *rigmat_units_kind_symbol(rigmat_kind kind);

/* Write the SI symbol of a dimension ("kg*m^2/s", "rad/s/sqrt(Hz)") into buf. */
void rigmat_units_format_dim(rigmat_dim d, char *buf, size_t len);

/* Dimension arithmetic. */
int rigmat_dim_equal(rigmat_dim a, rigmat_dim b);
rigmat_dim rigmat_dim_mul(rigmat_dim a, rigmat_dim b);
rigmat_dim rigmat_dim_div(rigmat_dim a, rigmat_dim b);

#endif /* RIGMAT_UNITS_H */
