/* check_kinds.c - the kind tables (src/model/kinds.[ch]): every table in
 * enum order, the units each stage reads from them, the sensor noise rule,
 * and the word lists the loader's hints use.  Unit symbols are the SI ones
 * (NIST Special Publication 811, 2008, chapter 4); the encoder's one-count
 * quantization is common practice. */
#include "kinds.h"
#include "testutil.h"

#include <check.h>
#include <math.h>
#include <string.h>

#ifndef M_PI
#define M_PI 3.14159265358979323846
#endif

START_TEST(tables_are_in_enum_order)
{
    size_t i;

    for (i = 0; i < RIGMAT_NJOINT_TYPES; i++)
        ck_assert_uint_eq((size_t)rigmat_joint_kinds[i].type, i);
    for (i = 0; i < RIGMAT_NSENSOR_KINDS; i++)
        ck_assert_uint_eq((size_t)rigmat_sensor_kinds[i].kind, i);
    for (i = 0; i < RIGMAT_NFORCE_FORMS; i++)
        ck_assert_uint_eq((size_t)rigmat_force_kinds[i].kind, i);
    for (i = 0; i < RIGMAT_NSHAPES; i++)
        ck_assert_uint_eq((size_t)rigmat_shape_kinds[i].shape, i);
    for (i = 0; i < RIGMAT_NMOTOR_DRIVES; i++)
        ck_assert_uint_eq((size_t)rigmat_drive_kinds[i].drive, i);
    for (i = 0; i < RIGMAT_NMOTOR_FORMS; i++)
        ck_assert_uint_eq((size_t)rigmat_motor_forms[i].form, i);
    /* every entry is filled: a word and, for joints, the check description */
    for (i = 0; i < RIGMAT_NJOINT_TYPES; i++)
        ck_assert(rigmat_joint_kinds[i].word != NULL && rigmat_joint_kinds[i].relations != NULL);
    for (i = 0; i < RIGMAT_NSENSOR_KINDS; i++)
        ck_assert_ptr_nonnull(rigmat_sensor_kinds[i].word);
    /* the families the loader reads without a count in rigmat.h */
    ck_assert_uint_eq(RIGMAT_FORCE_ACROSS + 1, RIGMAT_NFORCE_FORMS);
    ck_assert_uint_eq(RIGMAT_SHAPE_BOX + 1, RIGMAT_NSHAPES);
    ck_assert_uint_eq(RIGMAT_DRIVE_DUTY + 1, RIGMAT_NMOTOR_DRIVES);
}
END_TEST

START_TEST(joint_coordinates_and_units)
{
    rigmat_joint j;

    memset(&j, 0, sizeof j);
    /* hinge: angle and rate in rad, rad/s; torque along it */
    j.type = RIGMAT_JOINT_HINGE;
    ck_assert_str_eq(rigmat_joint_kind(j.type)->suffix[0], ".angle");
    ck_assert_str_eq(rigmat_joint_kind(j.type)->suffix[1], ".rate");
    ck_assert_str_eq(rigmat_joint_unit(&j, 0), "rad");
    ck_assert_str_eq(rigmat_joint_unit(&j, 1), "rad/s");
    ck_assert_str_eq(rigmat_joint_unit(&j, 2), "rad/s^2");
    ck_assert_str_eq(rigmat_units_kind_symbol(rigmat_joint_kind(j.type)->effort), "N*m");
    /* slider and rolling: position and velocity in m, m/s; force along it */
    j.type = RIGMAT_JOINT_SLIDER;
    ck_assert_str_eq(rigmat_joint_kind(j.type)->suffix[0], ".position");
    ck_assert_str_eq(rigmat_joint_unit(&j, 1), "m/s");
    ck_assert_str_eq(rigmat_units_kind_symbol(rigmat_joint_kind(j.type)->effort), "N");
    j.type = RIGMAT_JOINT_ROLLING;
    ck_assert_str_eq(rigmat_joint_kind(j.type)->suffix[1], ".velocity");
    ck_assert_str_eq(rigmat_joint_unit(&j, 0), "m");
    /* a driven joint's input is its driven derivative */
    j.type = RIGMAT_JOINT_HINGE;
    j.driven = RIGMAT_DRIVEN_VELOCITY;
    ck_assert_int_eq(rigmat_joint_driven_kind(&j), RIGMAT_Q_ANGULAR_RATE);
    j.type = RIGMAT_JOINT_SLIDER;
    j.driven = RIGMAT_DRIVEN_ACCELERATION;
    ck_assert_int_eq(rigmat_joint_driven_kind(&j), RIGMAT_Q_ACCELERATION);
    j.driven = RIGMAT_DRIVEN_POSITION;
    ck_assert_int_eq(rigmat_joint_driven_kind(&j), RIGMAT_Q_LENGTH);
    /* a weld has no coordinate; only a slider takes a pulley or a screw */
    ck_assert_int_eq(rigmat_joint_kind(RIGMAT_JOINT_FIXED)->has_coordinate, 0);
    ck_assert_int_eq(rigmat_joint_kind(RIGMAT_JOINT_SLIDER)->motor_linear, 1);
    ck_assert_int_eq(rigmat_joint_kind(RIGMAT_JOINT_ROLLING)->motor_linear, 0);
}
END_TEST

START_TEST(sensor_units_follow_the_kind_and_the_joint)
{
    rigmat_joint joints[2];
    rigmat_sensor s;
    rigmat_model m;

    memset(joints, 0, sizeof joints);
    memset(&s, 0, sizeof s);
    memset(&m, 0, sizeof m);
    joints[0].type = RIGMAT_JOINT_HINGE;
    joints[1].type = RIGMAT_JOINT_SLIDER;
    m.joints = joints;
    m.njoints = 2;
    s.gain = 1.0;
    s.kind = RIGMAT_SENSE_JOINT_POSITION;
    s.joint = 0;
    ck_assert_str_eq(rigmat_sensor_measured_unit(&m, &s), "rad");
    s.joint = 1;
    ck_assert_str_eq(rigmat_sensor_measured_unit(&m, &s), "m");
    s.kind = RIGMAT_SENSE_JOINT_VELOCITY;
    ck_assert_str_eq(rigmat_sensor_output_unit(&m, &s), "m/s");
    s.kind = RIGMAT_SENSE_DRIVE_FORCE;
    s.joint = 0;
    ck_assert_str_eq(rigmat_sensor_output_unit(&m, &s), "N*m");
    s.joint = RIGMAT_NONE; /* unresolved: no unit can be known */
    ck_assert_int_eq(rigmat_sensor_measured_kind(&m, &s), RIGMAT_Q_NUMBER);
    s.kind = RIGMAT_SENSE_SPECIFIC_FORCE;
    ck_assert_str_eq(rigmat_sensor_output_unit(&m, &s), "m/s^2");
    s.kind = RIGMAT_SENSE_RELATIVE_RATE;
    ck_assert_str_eq(rigmat_sensor_output_unit(&m, &s), "rad/s");
    s.kind = RIGMAT_SENSE_CURRENT;
    ck_assert_str_eq(rigmat_sensor_output_unit(&m, &s), "A");
    /* an encoder measures an angle; in counts its reading is counts */
    s.kind = RIGMAT_SENSE_MOTOR_ANGLE;
    s.counts_per_rev = 2048;
    ck_assert_str_eq(rigmat_sensor_output_unit(&m, &s), "rad");
    s.unit_counts = 1;
    ck_assert_str_eq(rigmat_sensor_measured_unit(&m, &s), "rad");
    ck_assert_str_eq(rigmat_sensor_output_unit(&m, &s), "counts");
}
END_TEST

START_TEST(encoder_noise_rule)
{
    rigmat_sensor s;
    double scale = 0, res = 0;

    memset(&s, 0, sizeof s);
    s.kind = RIGMAT_SENSE_MOTOR_ANGLE;
    s.counts_per_rev = 2048;
    /* common practice: without a resolution an encoder is quantized to one
     * decoded count, 2 pi / 2048 rad */
    rigmat_sensor_noise_rule(&s, &scale, &res);
    ck_assert_rel(res, 2.0 * M_PI / 2048.0, 1e-15);
    ck_assert(scale == 1.0);
    /* read in counts: 2048 / (2 pi) counts per rad */
    s.unit_counts = 1;
    rigmat_sensor_noise_rule(&s, &scale, &res);
    ck_assert_rel(scale, 2048.0 / (2.0 * M_PI), 1e-15);
    /* a stated resolution stays */
    s.resolution = 0.01;
    rigmat_sensor_noise_rule(&s, &scale, &res);
    ck_assert(res == 0.01);
    /* every angle reading takes an encoder alike (README.md, "The model file") */
    {
        const rigmat_sensor_kind angles[] = { RIGMAT_SENSE_ANGLE, RIGMAT_SENSE_RELATIVE_ANGLE,
            RIGMAT_SENSE_JOINT_POSITION };
        size_t i;
        for (i = 0; i < sizeof angles / sizeof angles[0]; i++) {
            s.kind = angles[i];
            s.resolution = 0.0;
            rigmat_sensor_noise_rule(&s, &scale, &res);
            ck_assert_rel(res, 2.0 * M_PI / 2048.0, 1e-15);
            ck_assert_rel(scale, 2048.0 / (2.0 * M_PI), 1e-15);
        }
    }
    /* any other kind: its own resolution, scale 1 */
    s.kind = RIGMAT_SENSE_RATE;
    s.resolution = 0.002;
    rigmat_sensor_noise_rule(&s, &scale, &res);
    ck_assert(res == 0.002 && scale == 1.0);
}
END_TEST

START_TEST(word_lists_for_hints)
{
    const char *w[16];
    size_t n = rigmat_sensor_words(w, 16);

    /* two kinds share position and velocity (joint and point forms) */
    ck_assert_uint_eq(n, RIGMAT_NSENSOR_KINDS - 2);
    ck_assert_str_eq(w[0], "position");
    ck_assert_str_eq(w[n - 1], "drive_force");
    n = rigmat_joint_words(w, 16);
    ck_assert_uint_eq(n, RIGMAT_NJOINT_TYPES);
    ck_assert_str_eq(w[1], "hinge");
    n = rigmat_shape_words(w, 16);
    ck_assert_uint_eq(n, RIGMAT_NSHAPES - 1); /* "given" is not a word of the file */
    ck_assert_str_eq(w[0], "point");
    n = rigmat_drive_words(w, 16);
    ck_assert_str_eq(w[n - 1], "duty");
    ck_assert_int_eq(rigmat_drive_kind_desc(RIGMAT_DRIVE_CURRENT)->has_current_state, 0);
    ck_assert_int_eq(rigmat_drive_kind_desc(RIGMAT_DRIVE_DUTY)->needs_supply, 1);
}
END_TEST

Suite *kinds_suite(void);
Suite *kinds_suite(void)
{
    Suite *s = suite_create("kinds");
    TCase *tc = tcase_create("tables");

    tcase_add_test(tc, tables_are_in_enum_order);
    tcase_add_test(tc, joint_coordinates_and_units);
    tcase_add_test(tc, sensor_units_follow_the_kind_and_the_joint);
    tcase_add_test(tc, encoder_noise_rule);
    tcase_add_test(tc, word_lists_for_hints);
    suite_add_tcase(s, tc);
    return s;
}
