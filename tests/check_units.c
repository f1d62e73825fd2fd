/* check_units.c - the units suite: conversion factors, the grammar, the
 * dimension rules (Hz, rad/s and rpm kept apart), the hints, hostile input.
 *
 * Reference values: NIST Special Publication 811 (2008 edition), "Guide for
 * the Use of the International System of Units", Appendix B.8 (factors for
 * units listed alphabetically).  Exact definitions are checked to 1e-15;
 * the seven-digit factors of B.8, recalled from memory rather than read for
 * this file, are marked so and checked to their printed precision. */
#include "units.h"
#include "testutil.h"

#include <check.h>
#include <math.h>
#include <string.h>

#define PI 3.14159265358979323846
#define EXACT 1e-15
#define TABLE7 1e-6 /* B.8 prints seven significant digits */

static rigmat_error fresh_error(void)
{
    rigmat_error e;

    memset(&e, 0, sizeof e);
    return e;
}

/* SI value of text, which must parse. */
static double si(const char *text)
{
    rigmat_error err = fresh_error();
    rigmat_quantity q;
    const rigmat_status rc = rigmat_units_parse(text, &q, &err);

    ck_assert_msg(rc == RIGMAT_OK, "'%s' did not parse: %s (col %lu; %s)", text, err.message,
            err.where.col, err.hint);
    return q.value;
}

static rigmat_dim dim(const char *text)
{
    rigmat_error err = fresh_error();
    rigmat_quantity q;
    const rigmat_status rc = rigmat_units_parse(text, &q, &err);

    ck_assert_msg(rc == RIGMAT_OK, "'%s' did not parse: %s", text, err.message);
    return q.dim;
}

static void same_dim(const char *a, const char *b)
{
    ck_assert_msg(rigmat_dim_equal(dim(a), dim(b)), "'%s' and '%s' differ in dimension", a, b);
}

/* Value of text as a kind (flags as rigmat_units_expect_flags). */
static double as(const char *text, rigmat_kind kind, unsigned flags)
{
    rigmat_error err = fresh_error();
    double v = 0.0;
    const rigmat_status rc = rigmat_units_expect_flags(text, kind, flags, &v, &err);

    ck_assert_msg(rc == RIGMAT_OK, "'%s' refused as %s: %s (hint: %s)", text,
            rigmat_units_kind_words(kind), err.message, err.hint);
    return v;
}

/* text must fail (as kind when kind >= 0, else in plain parsing) at col,
 * with message containing msg and hint containing hint (NULL: unchecked). */
static void fails(const char *text, int kind, unsigned flags, unsigned long col, const char *msg,
        const char *hint)
{
    rigmat_error err = fresh_error();
    rigmat_quantity q;
    double v;
    rigmat_status rc;

    if (kind >= 0)
        rc = rigmat_units_expect_flags(text, (rigmat_kind)kind, flags, &v, &err);
    else
        rc = rigmat_units_parse(text, &q, &err);
    ck_assert_msg(rc == RIGMAT_EMODEL, "'%s' was accepted (status %d)", text, (int)rc);
    ck_assert_msg(err.status == RIGMAT_EMODEL, "'%s': status not recorded", text);
    if (col != 0)
        ck_assert_msg(err.where.col == col, "'%s': error at col %lu, want %lu (%s)", text,
                err.where.col, col, err.message);
    if (msg != NULL)
        ck_assert_msg(strstr(err.message, msg) != NULL, "'%s': message '%s' lacks '%s'", text,
                err.message, msg);
    if (hint != NULL)
        ck_assert_msg(strstr(err.hint, hint) != NULL, "'%s': hint '%s' lacks '%s'", text,
                err.hint, hint);
}

/* ------------------------------------------------- NIST SP 811 factors */

START_TEST(inch_is_exactly_25_4_mm)
{
    /* NIST SP 811 (2008), B.8: 1 in = 0.0254 m exactly */
    ck_assert_rel(si("1 in"), 0.0254, EXACT);
    ck_assert_rel(si("2.385 in"), 2.385 * 0.0254, EXACT);
    ck_assert_rel(si("12 in"), si("1 ft"), EXACT);
}
END_TEST

START_TEST(foot_is_exactly_0_3048_m)
{
    /* NIST SP 811 (2008), B.8: 1 ft = 0.3048 m exactly */
    ck_assert_rel(si("1 ft"), 0.3048, EXACT);
    ck_assert_rel(si("0.61 ft"), 0.61 * 0.3048, EXACT);
}
END_TEST

START_TEST(pound_is_exactly_0_45359237_kg)
{
    /* NIST SP 811 (2008), B.8: 1 lb (avoirdupois) = 0.45359237 kg exactly */
    ck_assert_rel(si("1 lb"), 0.45359237, EXACT);
    ck_assert_rel(as("4.2 lb", RIGMAT_Q_MASS, 0), 4.2 * 0.45359237, EXACT);
}
END_TEST

START_TEST(ounce_is_a_sixteenth_pound)
{
    /* exact definition: 1 oz (avoirdupois) = 1/16 lb */
    ck_assert_rel(si("16 oz"), 0.45359237, EXACT);
    /* NIST SP 811 (2008), B.8, from memory: 1 oz = 2.834952 E-02 kg */
    ck_assert_rel(si("1 oz"), 2.834952e-2, TABLE7);
}
END_TEST

START_TEST(lbf_is_pound_times_standard_gravity)
{
    /* exact definition: 1 lbf = 0.45359237 kg * 9.80665 m/s^2 */
    ck_assert_rel(si("lbf"), 0.45359237 * 9.80665, EXACT);
    /* NIST SP 811 (2008), B.8, from memory: 1 lbf = 4.448222 N */
    ck_assert_rel(as("1 lbf", RIGMAT_Q_FORCE, 0), 4.448222, TABLE7);
    /* NIST SP 811 (2008), B.8, from memory: 1 ozf = 2.780139 E-01 N */
    ck_assert_rel(as("1 ozf", RIGMAT_Q_FORCE, 0), 2.780139e-1, TABLE7);
}
END_TEST

START_TEST(kgf_is_exactly_9_80665_n)
{
    /* NIST SP 811 (2008), B.8: 1 kgf = 9.80665 N exactly */
    ck_assert_rel(si("1 kgf"), 9.80665, EXACT);
    /* the same weight of a gram: 1 gf = 1e-3 kgf */
    ck_assert_rel(si("250 gf"), 0.25 * 9.80665, EXACT);
    /* exact: 5 kgf*cm = 5 * 9.80665 N * 0.01 m */
    ck_assert_rel(as("5 kgf*cm", RIGMAT_Q_TORQUE, 0), 0.4903325, EXACT);
}
END_TEST

START_TEST(ozf_in_torque)
{
    /* exact definition: ozf*in = (0.45359237/16) kg * 9.80665 m/s^2 * 0.0254 m */
    ck_assert_rel(as("ozf*in", RIGMAT_Q_TORQUE, 0), 0.45359237 / 16.0 * 9.80665 * 0.0254, EXACT);
    /* NIST SP 811 (2008), B.8, from memory: 1 ozf*in = 7.061552 E-03 N*m */
    ck_assert_rel(as("1 ozf*in", RIGMAT_Q_TORQUE, 0), 7.061552e-3, TABLE7);
    /* NIST SP 811 (2008), B.8, from memory: 1 lbf*ft = 1.355818 N*m */
    ck_assert_rel(as("1 lbf*ft", RIGMAT_Q_TORQUE, 0), 1.355818, TABLE7);
}
END_TEST

START_TEST(rpm_is_2pi_over_60_rad_s)
{
    /* exact definition: 1 rpm = 2*pi/60 rad/s */
    ck_assert_rel(as("1200 rpm", RIGMAT_Q_ANGULAR_RATE, 0), 1200.0 * 2.0 * PI / 60.0, EXACT);
    /* NIST SP 811 (2008), B.8, from memory: 1 r/min = 1.047198 E-01 rad/s */
    ck_assert_rel(si("1 rpm"), 1.047198e-1, TABLE7);
    same_dim("rpm", "rad/s");
}
END_TEST

START_TEST(degree_and_revolution)
{
    /* exact definition: 1 deg = pi/180 rad */
    ck_assert_rel(as("30 deg", RIGMAT_Q_ANGLE, 0), PI / 6.0, EXACT);
    /* NIST SP 811 (2008), B.8, from memory: 1 degree = 1.745329 E-02 rad */
    ck_assert_rel(si("1 deg"), 1.745329e-2, TABLE7);
    /* exact definition: a revolution (turn) is 2*pi rad */
    ck_assert_rel(si("0.25 rev"), PI / 2.0, EXACT);
    ck_assert_rel(si("1 turn"), 2.0 * PI, EXACT);
    /* the degree sign is the same unit */
    ck_assert_rel(si("30\xc2\xb0"), PI / 6.0, EXACT);
}
END_TEST

START_TEST(g0_is_standard_gravity_and_g_the_gram)
{
    /* NIST SP 811 (2008), B.8: standard acceleration of gravity 9.80665 m/s^2 exactly */
    ck_assert_rel(as("1 g0", RIGMAT_Q_ACCELERATION, 0), 9.80665, EXACT);
    ck_assert_rel(si("120 ug0"), 120e-6 * 9.80665, EXACT);
    ck_assert_rel(as("310 g", RIGMAT_Q_MASS, 0), 0.31, EXACT);
    same_dim("g0", "m/s^2");
    same_dim("g", "kg");
}
END_TEST

START_TEST(minute_hour_millisecond)
{
    /* NIST SP 811 (2008), B.8: 1 min = 60 s, 1 h = 3600 s exactly */
    ck_assert_rel(si("2.5 min"), 150.0, EXACT);
    ck_assert_rel(si("1.5 h"), 5400.0, EXACT);
    ck_assert_rel(as("10 ms", RIGMAT_Q_TIME, 0), 0.01, EXACT);
}
END_TEST

START_TEST(inertia_units)
{
    /* exact: 3.3 g*cm^2 = 3.3e-3 kg * 1e-4 m^2 */
    ck_assert_rel(as("3.3 g*cm^2", RIGMAT_Q_INERTIA, 0), 3.3e-7, EXACT);
    /* NIST SP 811 (2008), B.8, from memory: 1 lb*in^2 = 2.926397 E-04 kg*m^2 */
    ck_assert_rel(as("1 lb*in^2", RIGMAT_Q_INERTIA, 0), 2.926397e-4, TABLE7);
    /* exact: ozf*in*s^2 = ozf*in in N*m, times s^2, is a moment of inertia */
    ck_assert_rel(as("1 ozf*in*s^2", RIGMAT_Q_INERTIA, 0),
            0.45359237 / 16.0 * 9.80665 * 0.0254, EXACT);
}
END_TEST

START_TEST(percent_is_a_hundredth)
{
    ck_assert_rel(as("85 %", RIGMAT_Q_NUMBER, 0), 0.85, EXACT);
    ck_assert_rel(si("%"), 0.01, EXACT);
    same_dim("%", "1");
}
END_TEST

/* --------------------------------------------------------------- grammar */

START_TEST(bare_number_is_si_and_dimensionless)
{
    rigmat_quantity q;

    ck_assert_int_eq(rigmat_units_parse("0.31", &q, NULL), RIGMAT_OK);
    ck_assert_rel(q.value, 0.31, EXACT);
    ck_assert(rigmat_dim_equal(q.dim, rigmat_units_dim(RIGMAT_Q_NUMBER)));
    /* as a kind, a bare number is that kind's SI unit */
    ck_assert_rel(as("0.061", RIGMAT_Q_LENGTH, 0), 0.061, EXACT);
    ck_assert_rel(as("125.6", RIGMAT_Q_ANGULAR_RATE, 0), 125.6, EXACT);
}
END_TEST

START_TEST(number_forms)
{
    ck_assert_rel(si("1e-3"), 1e-3, EXACT);
    ck_assert_rel(si("2.5E+2 mm"), 0.25, EXACT);
    ck_assert_rel(si("-20deg"), -20.0 * PI / 180.0, EXACT);
    ck_assert_rel(si("+0.8 kg"), 0.8, EXACT);
    ck_assert_rel(si(".5 m"), 0.5, EXACT);
    ck_assert_rel(si("5. m"), 5.0, EXACT);
    ck_assert_rel(si("200Hz"), 200.0, EXACT);
    ck_assert_rel(si("61mm"), 0.061, EXACT);
}
END_TEST

START_TEST(whitespace_is_free)
{
    ck_assert_rel(si("  0.8   kg  "), 0.8, EXACT);
    ck_assert_rel(si("0.8\tkg"), 0.8, EXACT);
    ck_assert_rel(si("0.018 N * m / A"), 0.018, EXACT);
    same_dim("N * m / A", "N*m/A");
    /* a space between two units multiplies them */
    same_dim("N m", "N*m");
}
END_TEST

START_TEST(si_prefixes)
{
    ck_assert_rel(si("65 mm"), 0.065, EXACT);
    ck_assert_rel(si("3 cm"), 0.03, EXACT);
    ck_assert_rel(si("7 dm"), 0.7, EXACT);
    ck_assert_rel(si("1.2 km"), 1200.0, EXACT);
    ck_assert_rel(si("40 um"), 40e-6, EXACT);
    ck_assert_rel(si("40 \xc2\xb5m"), 40e-6, EXACT); /* micro sign */
    ck_assert_rel(si("40 \xce\xbcm"), 40e-6, EXACT); /* Greek mu */
    ck_assert_rel(si("633 nm"), 633e-9, EXACT);
    ck_assert_rel(si("12 pm"), 12e-12, EXACT);
    ck_assert_rel(si("1.1 mH"), 1.1e-3, EXACT);
    ck_assert_rel(si("4.7 kohm"), 4700.0, EXACT);
    ck_assert_rel(si("2 M\xce\xa9"), 2e6, EXACT);
    ck_assert_rel(si("2.4 GHz"), 2.4e9, EXACT);
    ck_assert_rel(si("350 mA"), 0.35, EXACT);
    ck_assert_rel(si("15 mrad"), 0.015, EXACT);
    ck_assert_rel(si("8 us"), 8e-6, EXACT);
    ck_assert_rel(si("30 mN"), 0.03, EXACT);
}
END_TEST

START_TEST(whole_symbol_before_prefix)
{
    /* m is the metre, min the minute (not a milli-inch), mm and ms the
     * milli- forms, h the hour and H the henry */
    same_dim("m", "m");
    ck_assert_rel(si("1 m"), 1.0, EXACT);
    ck_assert_rel(si("1 min"), 60.0, EXACT);
    same_dim("min", "s");
    ck_assert_rel(si("1 mm"), 1e-3, EXACT);
    ck_assert_rel(si("1 ms"), 1e-3, EXACT);
    same_dim("ms", "s");
    same_dim("h", "s");
    same_dim("H", "V*s/A");
    /* kilo is not offered on the inch: kin is no unit */
    fails("3 kin", -1, 0, 3, "unknown unit 'kin'", NULL);
}
END_TEST

START_TEST(products_and_quotients_left_to_right)
{
    /* a/b/c = a/(b*c), a/b*c = (a/b)*c */
    same_dim("kg/m/s", "kg/(m*s)");
    same_dim("m/s*s", "m");
    same_dim("N*m*s/rad", "kg*m^2/s/rad");
    same_dim("m/s^2", "m*s^-2");
    same_dim("deg/s/sqrt(Hz)", "rad/(s*sqrt(Hz))");
    ck_assert_rel(si("0.005 deg/s/sqrt(Hz)"), 0.005 * PI / 180.0, EXACT);
    ck_assert_rel(si("36 km/h"), 10.0, EXACT);
}
END_TEST

START_TEST(whole_and_half_powers)
{
    same_dim("m^2", "m*m");
    same_dim("s^-2", "1/(s*s)");
    same_dim("s^(-2)", "1/s^2");
    same_dim("m^(1/2)", "sqrt(m)");
    same_dim("m^3/2", "m*sqrt(m)");
    same_dim("m^(-3/2)", "1/(m*sqrt(m))");
    same_dim("Hz^0.5", "sqrt(Hz)");
    ck_assert_rel(si("cm^3"), 1e-6, EXACT);
    ck_assert_rel(si("sqrt(h)"), 60.0, EXACT);
    ck_assert_rel(si("h^(1/2)"), 60.0, EXACT);
}
END_TEST

START_TEST(sqrt_and_parentheses)
{
    same_dim("sqrt(m^2)", "m");
    same_dim("(N*m)/(A)", "N*m/A");
    same_dim("1/(s*Hz)", "1/s/Hz");
    same_dim("((((m))))", "m");
    same_dim("sqrt (Hz)", "sqrt(Hz)");
    ck_assert_rel(si("0.8 N/sqrt(Hz)"), 0.8, EXACT);
    ck_assert_rel(si("2 sqrt(mm^2)"), 2e-3, EXACT);
}
END_TEST

START_TEST(unit_alone_is_one_of_it)
{
    /* exact: 1 V/krpm = 1 V / (1000 * 2*pi/60 rad/s) */
    ck_assert_rel(si("V/krpm"), 60.0 / (1000.0 * 2.0 * PI), EXACT);
    ck_assert_rel(si("rpm/V"), 2.0 * PI / 60.0, EXACT);
    ck_assert_rel(si("in"), 0.0254, EXACT);
    same_dim("V*s/rad", "kg*m^2/s^2/A/rad");
    same_dim("N/sqrt(Hz)", "kg*m/s^2/sqrt(Hz)");
}
END_TEST

START_TEST(unit_may_start_with_slash_after_number)
{
    ck_assert_rel(si("5/s"), 5.0, EXACT);
    same_dim("5/s", "1/s");
    same_dim("100 1/s", "Hz/cycle");
    same_dim("1/s", "s^-1");
}
END_TEST

START_TEST(electrical_units)
{
    same_dim("V", "W/A");
    same_dim("ohm", "V/A");
    same_dim("\xce\xa9", "ohm");
    same_dim("Ohm", "ohm");
    same_dim("H", "ohm*s");
    same_dim("J", "N*m");
    same_dim("W", "J/s");
    ck_assert_rel(as("2.4 ohm", RIGMAT_Q_RESISTANCE, 0), 2.4, EXACT);
    ck_assert_rel(as("1.1 mH", RIGMAT_Q_INDUCTANCE, 0), 1.1e-3, EXACT);
    ck_assert_rel(as("22.2 V", RIGMAT_Q_VOLTAGE, 0), 22.2, EXACT);
    ck_assert_rel(as("2.1 A", RIGMAT_Q_CURRENT, 0), 2.1, EXACT);
}
END_TEST

/* ------------------------------------------------------------ dimensions */

START_TEST(hz_rad_s_rpm_never_meet)
{
    ck_assert(!rigmat_dim_equal(dim("Hz"), dim("rad/s")));
    ck_assert(!rigmat_dim_equal(dim("Hz"), dim("rpm")));
    ck_assert(!rigmat_dim_equal(dim("Hz"), dim("1/s")));
    ck_assert(rigmat_dim_equal(dim("Hz"), dim("cycle/s")));
    ck_assert(rigmat_dim_equal(dim("rpm"), dim("rev/min")));
    ck_assert_rel(si("1 rev/min"), si("1 rpm"), EXACT);
}
END_TEST

START_TEST(dimension_arithmetic)
{
    const rigmat_dim force = rigmat_units_dim(RIGMAT_Q_FORCE);
    const rigmat_dim length = rigmat_units_dim(RIGMAT_Q_LENGTH);

    ck_assert(rigmat_dim_equal(rigmat_dim_mul(force, length),
            rigmat_units_dim(RIGMAT_Q_TORQUE)));
    ck_assert(rigmat_dim_equal(rigmat_dim_div(force, length),
            rigmat_units_dim(RIGMAT_Q_LIN_STIFFNESS)));
    ck_assert(rigmat_dim_equal(rigmat_dim_div(rigmat_dim_mul(force, length), length), force));
    ck_assert(!rigmat_dim_equal(force, length));
}
END_TEST

START_TEST(every_kind_symbol_parses_to_its_dimension)
{
    int k;

    for (k = 0; k < RIGMAT_Q_COUNT; k++) {
        const char *sym = rigmat_units_kind_symbol((rigmat_kind)k);
        const char *words = rigmat_units_kind_words((rigmat_kind)k);
        ck_assert_msg(words[0] == 'a', "kind %d words '%s'", k, words);
        ck_assert_msg(rigmat_dim_equal(dim(sym), rigmat_units_dim((rigmat_kind)k)),
                "kind %d: '%s' is not its own dimension", k, sym);
        /* and as that kind, one of the symbol is 1 (a lead: 1 m per turn) */
        ck_assert_rel(as(sym, (rigmat_kind)k, 0), 1.0, EXACT);
    }
}
END_TEST

/* Format d and parse the text back. */
static void round_trip(rigmat_dim d)
{
    char buf[128];
    rigmat_error err = fresh_error();
    rigmat_quantity q;

    rigmat_units_format_dim(d, buf, sizeof buf);
    ck_assert_msg(rigmat_units_parse(buf, &q, &err) == RIGMAT_OK, "'%s' does not parse: %s", buf,
            err.message);
    ck_assert_msg(rigmat_dim_equal(q.dim, d), "'%s' does not parse back to its dimension", buf);
    ck_assert_rel(q.value, 1.0, EXACT);
}

START_TEST(format_dim_examples)
{
    char buf[64];

    rigmat_units_format_dim(dim("kg*m^2/s"), buf, sizeof buf);
    ck_assert_str_eq(buf, "kg*m^2/s");
    rigmat_units_format_dim(dim("deg/s/sqrt(Hz)"), buf, sizeof buf);
    ck_assert_str_eq(buf, "rad/s/sqrt(Hz)");
    rigmat_units_format_dim(dim("100 Hz"), buf, sizeof buf);
    ck_assert_str_eq(buf, "Hz");
    rigmat_units_format_dim(dim("7"), buf, sizeof buf);
    ck_assert_str_eq(buf, "1");
    rigmat_units_format_dim(dim("ms^-1"), buf, sizeof buf);
    ck_assert_str_eq(buf, "1/s");
    rigmat_units_format_dim(dim("m^3/2"), buf, sizeof buf);
    ck_assert_str_eq(buf, "m^(3/2)");
    rigmat_units_format_dim(dim("ug0/sqrt(Hz)"), buf, sizeof buf);
    ck_assert_str_eq(buf, "m/s^2/sqrt(Hz)");
    rigmat_units_format_dim(dim("V*s/rad"), buf, sizeof buf);
    ck_assert_str_eq(buf, "kg*m^2/s^2/A/rad");
}
END_TEST

START_TEST(format_dim_round_trips)
{
    /* a fixed-seed 64-bit linear congruential sequence (multiplier and
     * increment as Knuth gives them for MMIX; from memory) */
    unsigned long long x = 20260311ULL;
    int n, i;

    for (n = 0; n < 500; n++) {
        rigmat_dim d;
        for (i = 0; i < RIGMAT_NDIM; i++) {
            x = x * 6364136223846793005ULL + 1442695040888963407ULL;
            d.half[i] = (signed char)((int)((x >> 33) % 13) - 6);
        }
        round_trip(d);
    }
    for (i = 0; i < RIGMAT_Q_COUNT; i++)
        round_trip(rigmat_units_dim((rigmat_kind)i));
}
END_TEST

START_TEST(format_dim_short_buffer_is_safe)
{
    char buf[5];

    memset(buf, 'x', sizeof buf);
    rigmat_units_format_dim(dim("kg*m^2/s^2/A/rad"), buf, sizeof buf);
    ck_assert(memchr(buf, '\0', sizeof buf) != NULL);
    ck_assert(strncmp(buf, "kg*m", 4) == 0);
    buf[0] = 'x';
    rigmat_units_format_dim(dim("kg"), buf, 0);
    ck_assert(buf[0] == 'x');
}
END_TEST

/* ------------------------------------------------------------ expecting */

START_TEST(mass_got_length_names_both)
{
    fails("3 m", RIGMAT_Q_MASS, 0, 3, "expected a mass (kg), got a length (m)", NULL);
    fails("0.5 kg", RIGMAT_Q_LENGTH, 0, 5, "expected a length (m), got a mass (kg)", NULL);
}
END_TEST

START_TEST(torque_in_kg_cm_suggests_kgf_cm)
{
    fails("5 kg*cm", RIGMAT_Q_TORQUE, 0, 3, "expected a torque (N*m), got kg*m",
            "did you mean kgf*cm?");
    fails("40 oz*in", RIGMAT_Q_TORQUE, 0, 4, NULL, "did you mean ozf*in?");
    fails("2 kg", RIGMAT_Q_FORCE, 0, 3, NULL, "did you mean kgf?");
    fails("0.2 kg*cm/A", RIGMAT_Q_TORQUE_CONSTANT, 0, 5, NULL, "did you mean kgf*cm/A?");
    fails("3 kgf", RIGMAT_Q_MASS, 0, 3, "got a force (N)", "did you mean kg?");
}
END_TEST

START_TEST(angular_rate_refuses_hz)
{
    fails("100 Hz", RIGMAT_Q_ANGULAR_RATE, 0, 5,
            "expected an angular rate (rad/s), got a frequency (Hz)", "rad/s or rpm");
    fails("2 Hz/s", RIGMAT_Q_ANGULAR_ACCEL, 0, 3, NULL, "rad/s or rpm");
}
END_TEST

START_TEST(frequency_refuses_rad_s_and_rpm)
{
    fails("31.4 rad/s", RIGMAT_Q_FREQUENCY, 0, 6, "expected a frequency (Hz)", "in Hz");
    fails("1200 rpm", RIGMAT_Q_FREQUENCY, 0, 6, "got an angular rate (rad/s)", "in Hz");
    fails("5 Hz", RIGMAT_Q_TIME, 0, 3, "expected a time (s), got a frequency (Hz)", NULL);
}
END_TEST

START_TEST(cycle_as_angle_only_when_asked)
{
    ck_assert_rel(as("5 Hz", RIGMAT_Q_ANGULAR_RATE, RIGMAT_UNITS_CYCLE_AS_ANGLE), 10.0 * PI,
            EXACT);
    ck_assert_rel(as("2 rad/s", RIGMAT_Q_FREQUENCY, RIGMAT_UNITS_CYCLE_AS_ANGLE), 1.0 / PI,
            EXACT);
    ck_assert_rel(as("60 rpm", RIGMAT_Q_FREQUENCY, RIGMAT_UNITS_CYCLE_AS_ANGLE), 1.0, EXACT);
    ck_assert_rel(as("42 Hz", RIGMAT_Q_FREQUENCY, RIGMAT_UNITS_CYCLE_AS_ANGLE), 42.0, EXACT);
}
END_TEST

START_TEST(nm_asks_for_n_times_m)
{
    fails("5 Nm", RIGMAT_Q_TORQUE, 0, 3, "unknown unit 'Nm'", "write N*m");
    fails("0.3 mNm", -1, 0, 5, "unknown unit 'mNm'", "write mN*m");
    fails("0.02 kgm^2", -1, 0, 6, NULL, "write kg*m");
}
END_TEST

START_TEST(torque_constant_and_back_emf_interchange)
{
    ck_assert_rel(as("0.018 N*m/A", RIGMAT_Q_BACK_EMF, 0), 0.018, EXACT);
    ck_assert_rel(as("0.018 V*s/rad", RIGMAT_Q_TORQUE_CONSTANT, 0), 0.018, EXACT);
    ck_assert_rel(as("0.018 V*s", RIGMAT_Q_BACK_EMF, 0), 0.018, EXACT);
    /* exact: 1.9 V/krpm = 1.9 * 60 / (1000 * 2*pi) V*s/rad */
    ck_assert_rel(as("1.9 V/krpm", RIGMAT_Q_BACK_EMF, 0), 1.9 * 60.0 / (2000.0 * PI), EXACT);
    ck_assert_rel(as("1.9 V/krpm", RIGMAT_Q_TORQUE_CONSTANT, 0), 1.9 * 60.0 / (2000.0 * PI),
            EXACT);
}
END_TEST

START_TEST(speed_constant_is_inverted)
{
    /* exact: Kt = 1 / (500 rpm/V) = 60 / (500 * 2*pi) N*m/A */
    ck_assert_rel(as("500 rpm/V", RIGMAT_Q_TORQUE_CONSTANT, 0), 60.0 / (1000.0 * PI), EXACT);
    ck_assert_rel(as("52.5 rad/s/V", RIGMAT_Q_BACK_EMF, 0), 1.0 / 52.5, EXACT);
    fails("0 rpm/V", RIGMAT_Q_TORQUE_CONSTANT, 0, 3, "cannot be inverted", NULL);
    /* a speed constant in Hz/V is cycles, not radians */
    fails("8 Hz/V", RIGMAT_Q_TORQUE_CONSTANT, 0, 3, "expected a torque constant (N*m/A)", NULL);
}
END_TEST

START_TEST(lead_is_metres_per_turn)
{
    ck_assert_rel(as("4 mm/rev", RIGMAT_Q_LEAD, 0), 0.004, EXACT);
    ck_assert_rel(as("4 mm", RIGMAT_Q_LEAD, 0), 0.004, EXACT);
    ck_assert_rel(as("0.004", RIGMAT_Q_LEAD, 0), 0.004, EXACT);
    ck_assert_rel(as("1 mm/rad", RIGMAT_Q_LEAD, 0), 2e-3 * PI, EXACT);
    ck_assert_rel(as("0.2 in/turn", RIGMAT_Q_LEAD, 0), 0.2 * 0.0254, EXACT);
    fails("4 mm/s", RIGMAT_Q_LEAD, 0, 3, "expected a lead (length per turn) (m/rev)", NULL);
}
END_TEST

START_TEST(per_radian_implied_for_rotational_springs)
{
    ck_assert_rel(as("2.5 N*m/rad", RIGMAT_Q_ROT_STIFFNESS, 0), 2.5, EXACT);
    ck_assert_rel(as("2.5 N*m", RIGMAT_Q_ROT_STIFFNESS, 0), 2.5, EXACT);
    ck_assert_rel(as("0.004 N*m*s/rad", RIGMAT_Q_ROT_DAMPING, 0), 0.004, EXACT);
    ck_assert_rel(as("0.004 N*m*s", RIGMAT_Q_ROT_DAMPING, 0), 0.004, EXACT);
    /* exact: 1 N*m/deg = 180/pi N*m/rad */
    ck_assert_rel(as("0.1 N*m/deg", RIGMAT_Q_ROT_STIFFNESS, 0), 18.0 / PI, 1e-14);
    fails("300 N/m", RIGMAT_Q_ROT_STIFFNESS, 0, 5, "got a linear stiffness (N/m)", NULL);
    fails("2.5 N*m/rad", RIGMAT_Q_TORQUE, 0, 5, "got a rotational stiffness", NULL);
}
END_TEST

START_TEST(density_forms)
{
    ck_assert_int_eq(rigmat_units_expect_density("0.8 N/sqrt(Hz)", RIGMAT_Q_FORCE, NULL, NULL),
            RIGMAT_OK);
    ck_assert_rel(as("0.8 N/sqrt(Hz)", RIGMAT_Q_FORCE, RIGMAT_UNITS_PER_SQRT_HZ), 0.8, EXACT);
    ck_assert_rel(as("0.005 deg/s/sqrt(Hz)", RIGMAT_Q_ANGULAR_RATE, RIGMAT_UNITS_PER_SQRT_HZ),
            0.005 * PI / 180.0, EXACT);
    ck_assert_rel(as("120 ug0/sqrt(Hz)", RIGMAT_Q_ACCELERATION, RIGMAT_UNITS_PER_SQRT_HZ),
            120e-6 * 9.80665, EXACT);
    /* common practice: an angle random walk of 0.15 deg/sqrt(h) is
     * 0.15/60 deg/s/sqrt(Hz) (sqrt(3600 s) = 60 sqrt(s)) */
    ck_assert_rel(as("0.15 deg/sqrt(h)", RIGMAT_Q_ANGULAR_RATE, RIGMAT_UNITS_PER_SQRT_HZ),
            0.15 / 60.0 * PI / 180.0, EXACT);
}
END_TEST

START_TEST(density_and_plain_value_refuse_each_other)
{
    double v;

    fails("0.8 N", RIGMAT_Q_FORCE, RIGMAT_UNITS_PER_SQRT_HZ, 5,
            "expected a force per sqrt(Hz) (N/sqrt(Hz)), got a force (N)", "N/sqrt(Hz)");
    fails("0.8 N/sqrt(Hz)", RIGMAT_Q_FORCE, 0, 5,
            "got a force per sqrt(Hz) (N/sqrt(Hz))", "not a density");
    fails("0.64 N^2/Hz", RIGMAT_Q_FORCE, RIGMAT_UNITS_PER_SQRT_HZ, 6, NULL, "square root");
    fails("0.01 deg/s/sqrt(Hz)", RIGMAT_Q_FREQUENCY, RIGMAT_UNITS_PER_SQRT_HZ, 6, NULL, "Hz");
    ck_assert_int_eq(rigmat_units_expect_density("0.01 Hz/sqrt(Hz)", RIGMAT_Q_ANGULAR_RATE, &v,
                             NULL), RIGMAT_EMODEL);
}
END_TEST

/* ---------------------------------------------------------------- errors */

START_TEST(nan_inf_and_overflow_are_errors)
{
    fails("nan", -1, 0, 1, "not a finite number", NULL);
    fails("NaN kg", RIGMAT_Q_MASS, 0, 1, "not a finite number", NULL);
    fails("inf", -1, 0, 1, "not a finite number", NULL);
    fails("  -inf m", -1, 0, 3, "not a finite number", NULL);
    fails(".inf", -1, 0, 1, "not a finite number", NULL);
    fails("-.NaN", -1, 0, 1, "not a finite number", NULL);
    fails("1e999", -1, 0, 1, "out of range", NULL);
    fails("-1e999 kg", -1, 0, 1, "out of range", NULL);
    fails("1e300 km^12", -1, 0, 0, "out of range", NULL);
    fails("1e-300 (nm^12)^12", -1, 0, 0, "out of range", NULL);
    /* underflow is out of range too (issue 10): to zero, or to a
     * subnormal (below DBL_MIN = 2.2e-308, C99 5.2.4.2.2) */
    fails("1e-400", -1, 0, 1, "out of range", NULL);
    fails("1e-400 kg", RIGMAT_Q_MASS, 0, 1, "out of range", NULL);
    fails("4e-320 kg", RIGMAT_Q_MASS, 0, 1, "out of range", NULL);
    fails("1e-300 ug", RIGMAT_Q_MASS, 0, 0, "out of range once converted to SI", NULL);
}
END_TEST

START_TEST(empty_text_is_an_error)
{
    rigmat_quantity q;
    rigmat_error err = fresh_error();

    fails("", -1, 0, 1, "empty", NULL);
    fails("   ", RIGMAT_Q_MASS, 0, 1, "empty", NULL);
    ck_assert_int_eq(rigmat_units_parse(NULL, &q, &err), RIGMAT_EUSAGE);
    ck_assert_int_eq(rigmat_units_parse("kgg", &q, NULL), RIGMAT_EMODEL);
}
END_TEST

START_TEST(garbage_after_the_unit)
{
    fails("5 kg )", -1, 0, 6, "unbalanced ')'", NULL);
    fails("5 kg;", -1, 0, 5, "unexpected ';'", NULL);
    fails("5 kg*", -1, 0, 5, "'*' is not followed by a unit", NULL);
    fails("5 kg /  ", -1, 0, 6, "'/' is not followed by a unit", NULL);
    fails("5 kg*2", -1, 0, 6, "found a number", NULL);
    fails("5 kg 3", -1, 0, 6, "unexpected '3'", NULL);
    fails("1,5 kg", -1, 0, 2, "','", "decimal separator is '.'");
    fails("- 5 kg", -1, 0, 1, "expected a number", NULL);
    fails("0x1A m", -1, 0, 2, "unknown unit 'x1A'", NULL);
}
END_TEST

START_TEST(unknown_symbol_suggests_nearest)
{
    fails("2 kgg", -1, 0, 3, "unknown unit 'kgg'", "did you mean kgf");
    fails("5 hz", -1, 0, 3, NULL, "did you mean Hz?");
    fails("7 degs", -1, 0, 3, NULL, "did you mean deg?");
    fails("7 sec", -1, 0, 3, NULL, "known units");
    fails("3 furlong", -1, 0, 3, "unknown unit 'furlong'", "known units");
    fails("3 m2", -1, 0, 3, NULL, "write m^2");
    fails("9 N*m/rad/s2", -1, 0, 11, NULL, "write s^2");
    fails("12 V*sqrt", -1, 0, 6, "sqrt needs parentheses", NULL);
}
END_TEST

START_TEST(unbalanced_parentheses)
{
    fails("5 (kg", -1, 0, 3, "unbalanced '('", NULL);
    fails("5 kg*(m/s", -1, 0, 6, "unbalanced '('", NULL);
    fails("5 sqrt(Hz", -1, 0, 3, "unbalanced '('", NULL);
    fails("5 kg)", -1, 0, 5, "unbalanced ')'", NULL);
    fails("5 ()", -1, 0, 4, "expected a unit, found ')'", NULL);
    fails("m^(2", -1, 0, 3, "unbalanced '(' in the exponent", NULL);
}
END_TEST

START_TEST(nesting_depth_is_bounded)
{
    char text[300];
    size_t i, n;

    /* 16 levels are allowed */
    n = 0;
    for (i = 0; i < 16; i++)
        text[n++] = '(';
    text[n++] = 'm';
    for (i = 0; i < 16; i++)
        text[n++] = ')';
    text[n] = '\0';
    same_dim(text, "m");
    /* the 17th is refused where it opens */
    n = 0;
    for (i = 0; i < 17; i++)
        text[n++] = '(';
    text[n++] = 'm';
    for (i = 0; i < 17; i++)
        text[n++] = ')';
    text[n] = '\0';
    fails(text, -1, 0, 17, "nested too deeply", NULL);
    /* sqrt counts as a level too */
    n = 0;
    for (i = 0; i < 17; i++) {
        memcpy(text + n, "sqrt(", 5);
        n += 5;
    }
    text[n] = '\0';
    fails(text, -1, 0, 81, "nested too deeply", NULL);
}
END_TEST

START_TEST(long_text_is_refused_without_reading_it_all)
{
    static char text[100000];

    memset(text, '(', sizeof text - 1);
    text[sizeof text - 1] = '\0';
    fails(text, -1, 0, 1, "too long", NULL);
    memset(text, 'x', 40);
    text[40] = '\0';
    fails(text, -1, 0, 1, "unit name too long", NULL);
    fails("1234567890123456789012345678901234567890123456789012345678901234567890123 m", -1, 0,
            1, "number too long", NULL);
}
END_TEST

START_TEST(exponents_are_bounded)
{
    same_dim("m^12", "m^6*m^6");
    fails("m^13", -1, 0, 3, "exponent too large", NULL);
    fails("m^99999999999999999999", -1, 0, 3, "exponent too large", NULL);
    fails("m^", -1, 0, 3, "expected an exponent", NULL);
    fails("m^x", -1, 0, 3, "expected an exponent", NULL);
    fails("(m^12)^12", -1, 0, 1, "exponent out of range", NULL);
    fails("sqrt(sqrt(Hz))", -1, 0, 1, "half power", NULL);
    fails("(m^1/2)^(1/2)", -1, 0, 1, "half power", NULL);
}
END_TEST

START_TEST(columns_count_characters)
{
    /* the degree sign is two bytes but one character */
    fails("30\xc2\xb0 x", -1, 0, 5, "unknown unit 'x'", NULL);
    fails("5 \xc2\xb5xx", -1, 0, 3, "unknown unit", NULL);
    fails("5 kg*\xce\xa9q", -1, 0, 6, "unknown unit", NULL);
}
END_TEST

Suite *units_suite(void);

Suite *units_suite(void)
{
    Suite *s = suite_create("units");
    TCase *nist = tcase_create("nist");
    TCase *grammar = tcase_create("grammar");
    TCase *dims = tcase_create("dimensions");
    TCase *expect = tcase_create("expect");
    TCase *errors = tcase_create("errors");

    tcase_add_test(nist, inch_is_exactly_25_4_mm);
    tcase_add_test(nist, foot_is_exactly_0_3048_m);
    tcase_add_test(nist, pound_is_exactly_0_45359237_kg);
    tcase_add_test(nist, ounce_is_a_sixteenth_pound);
    tcase_add_test(nist, lbf_is_pound_times_standard_gravity);
    tcase_add_test(nist, kgf_is_exactly_9_80665_n);
    tcase_add_test(nist, ozf_in_torque);
    tcase_add_test(nist, rpm_is_2pi_over_60_rad_s);
    tcase_add_test(nist, degree_and_revolution);
    tcase_add_test(nist, g0_is_standard_gravity_and_g_the_gram);
    tcase_add_test(nist, minute_hour_millisecond);
    tcase_add_test(nist, inertia_units);
    tcase_add_test(nist, percent_is_a_hundredth);
    suite_add_tcase(s, nist);

    tcase_add_test(grammar, bare_number_is_si_and_dimensionless);
    tcase_add_test(grammar, number_forms);
    tcase_add_test(grammar, whitespace_is_free);
    tcase_add_test(grammar, si_prefixes);
    tcase_add_test(grammar, whole_symbol_before_prefix);
    tcase_add_test(grammar, products_and_quotients_left_to_right);
    tcase_add_test(grammar, whole_and_half_powers);
    tcase_add_test(grammar, sqrt_and_parentheses);
    tcase_add_test(grammar, unit_alone_is_one_of_it);
    tcase_add_test(grammar, unit_may_start_with_slash_after_number);
    tcase_add_test(grammar, electrical_units);
    suite_add_tcase(s, grammar);

    tcase_add_test(dims, hz_rad_s_rpm_never_meet);
    tcase_add_test(dims, dimension_arithmetic);
    tcase_add_test(dims, every_kind_symbol_parses_to_its_dimension);
    tcase_add_test(dims, format_dim_examples);
    tcase_add_test(dims, format_dim_round_trips);
    tcase_add_test(dims, format_dim_short_buffer_is_safe);
    suite_add_tcase(s, dims);

    tcase_add_test(expect, mass_got_length_names_both);
    tcase_add_test(expect, torque_in_kg_cm_suggests_kgf_cm);
    tcase_add_test(expect, angular_rate_refuses_hz);
    tcase_add_test(expect, frequency_refuses_rad_s_and_rpm);
    tcase_add_test(expect, cycle_as_angle_only_when_asked);
    tcase_add_test(expect, nm_asks_for_n_times_m);
    tcase_add_test(expect, torque_constant_and_back_emf_interchange);
    tcase_add_test(expect, speed_constant_is_inverted);
    tcase_add_test(expect, lead_is_metres_per_turn);
    tcase_add_test(expect, per_radian_implied_for_rotational_springs);
    tcase_add_test(expect, density_forms);
    tcase_add_test(expect, density_and_plain_value_refuse_each_other);
    suite_add_tcase(s, expect);

    tcase_add_test(errors, nan_inf_and_overflow_are_errors);
    tcase_add_test(errors, empty_text_is_an_error);
    tcase_add_test(errors, garbage_after_the_unit);
    tcase_add_test(errors, unknown_symbol_suggests_nearest);
    tcase_add_test(errors, unbalanced_parentheses);
    tcase_add_test(errors, nesting_depth_is_bounded);
    tcase_add_test(errors, long_text_is_refused_without_reading_it_all);
    tcase_add_test(errors, exponents_are_bounded);
    tcase_add_test(errors, columns_count_characters);
    suite_add_tcase(s, errors);
    return s;
}
