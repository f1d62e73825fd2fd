/* kinds.c - the descriptor tables of joint types, sensor kinds, force forms,
 * body shapes, motor drives and motor forms (see kinds.h). */
#include "kinds.h"

#include <math.h>
#include <stddef.h>
#include <stdio.h>
#include <string.h>

/* C99 has no M_PI; the digits are those of any libm header */
#ifndef M_PI
#define M_PI 3.14159265358979323846
#endif

#define NW(a) (sizeof(a) / sizeof(a)[0])

/* ------------------------------------------------------------ joints */

const char *const rigmat_joint_common_keys[] = { "type", "parent", "child", "at", "angle",
    "part" };
const size_t rigmat_joint_ncommon_keys = NW(rigmat_joint_common_keys);
const char *const rigmat_joint_all_keys[] = { "type", "parent", "child", "at", "angle", "part",
    "axis", "reference", "radius", "driven", "role", "density", "bandwidth", "limit" };
const size_t rigmat_joint_nall_keys = NW(rigmat_joint_all_keys);
const char *const rigmat_joint_driven_keys[] = { "role", "density", "bandwidth", "limit" };
const size_t rigmat_joint_ndriven_keys = NW(rigmat_joint_driven_keys);

static const char *const reference_words[] = { "parent", "world" };

static const rigmat_key_spec slider_keys[] = {
    { "axis", RIGMAT_KEY_DIRECTION, RIGMAT_Q_NUMBER, RIGMAT_RANGE_ANY, 0, NULL,
      offsetof(rigmat_joint, axis), NULL, 0, NULL, NULL },
};
static const rigmat_key_spec hinge_keys[] = {
    { "reference", RIGMAT_KEY_WORD, RIGMAT_Q_NUMBER, RIGMAT_RANGE_ANY, 0, NULL,
      offsetof(rigmat_joint, reference_world), reference_words, NW(reference_words),
      "a reference (parent or world)", NULL },
};
static const rigmat_key_spec rolling_keys[] = {
    { "radius", RIGMAT_KEY_NUMBER, RIGMAT_Q_LENGTH, RIGMAT_RANGE_POSITIVE, 1,
      "the wheel's rolling radius", offsetof(rigmat_joint, radius_m), NULL, 0, NULL, NULL },
};

/* The parent's angle and the joint's angle offset, as check prints them. */
static void angle_terms(const rigmat_model *m, const rigmat_joint *j, char *base, size_t blen,
        char *off, size_t olen)
{
    if (j->parent == 0)
        base[0] = '\0';
    else
        snprintf(base, blen, "%s angle", m->bodies[j->parent].name);
    off[0] = '\0';
    if (j->angle_rad != 0.0)
        snprintf(off, olen, "%.6g rad", j->angle_rad);
}

#define JOIN(a, b) ((a)[0] && (b)[0] ? " + " : "")

static void hinge_relations(const rigmat_model *m, const rigmat_joint *j, char *angle,
        size_t alen, char *place, size_t plen)
{
    const char *child = m->bodies[j->child].name, *parent = m->bodies[j->parent].name;
    char base[160], off[48];

    angle_terms(m, j, base, sizeof base, off, sizeof off);
    if (j->reference_world)
        snprintf(angle, alen, "%s angle = %s%s%s (world angle)", child, off, off[0] ? " + "
                : "", j->name);
    else
        snprintf(angle, alen, "%s angle = %s%s%s%s%s", child, base, JOIN(base, off), off,
                (base[0] || off[0]) ? " + " : "", j->name);
    snprintf(place, plen, "%s origin = [%.6g, %.6g] m in the frame of %s", child, j->at_m[0],
            j->at_m[1], parent);
}

static void slider_relations(const rigmat_model *m, const rigmat_joint *j, char *angle,
        size_t alen, char *place, size_t plen)
{
    const char *child = m->bodies[j->child].name, *parent = m->bodies[j->parent].name;
    char base[160], off[48];

    angle_terms(m, j, base, sizeof base, off, sizeof off);
    snprintf(angle, alen, "%s angle = %s%s%s", child, base, JOIN(base, off),
            (base[0] || off[0]) ? off : "0");
    snprintf(place, plen, "%s origin = [%.6g, %.6g] m + %s * [%.6g, %.6g] in the frame of %s",
            child, j->at_m[0], j->at_m[1], j->name, j->axis[0], j->axis[1], parent);
}

static void rolling_relations(const rigmat_model *m, const rigmat_joint *j, char *angle,
        size_t alen, char *place, size_t plen)
{
    const char *child = m->bodies[j->child].name, *parent = m->bodies[j->parent].name;
    char base[160], off[48];

    angle_terms(m, j, base, sizeof base, off, sizeof off);
    /* worked sign example (README, conventions): +0.1 m of travel on a
     * 0.061 m wheel turns it by -0.1/0.061 = -1.64 rad, clockwise */
    snprintf(angle, alen, "%s angle = %s%s%s%s%s / %.6g m", child, base, JOIN(base, off),
            off, (base[0] || off[0]) ? " - " : "-", j->name, j->radius_m);
    snprintf(place, plen, "%s centre = [%.6g m + %s, %.6g m] in the frame of %s", child,
            j->at_m[0], j->name, j->at_m[1] + j->radius_m, parent);
}

static void fixed_relations(const rigmat_model *m, const rigmat_joint *j, char *angle,
        size_t alen, char *place, size_t plen)
{
    const char *child = m->bodies[j->child].name, *parent = m->bodies[j->parent].name;
    char base[160], off[48];

    angle_terms(m, j, base, sizeof base, off, sizeof off);
    snprintf(angle, alen, "%s angle = %s%s%s", child, base, JOIN(base, off),
            (base[0] || off[0]) ? off : "0");
    snprintf(place, plen, "%s origin = [%.6g, %.6g] m in the frame of %s", child, j->at_m[0],
            j->at_m[1], parent);
}

#undef JOIN

#define LINEAR_Q { RIGMAT_Q_LENGTH, RIGMAT_Q_VELOCITY, RIGMAT_Q_ACCELERATION }
#define ANGULAR_Q { RIGMAT_Q_ANGLE, RIGMAT_Q_ANGULAR_RATE, RIGMAT_Q_ANGULAR_ACCEL }

const rigmat_joint_desc rigmat_joint_kinds[RIGMAT_NJOINT_TYPES] = {
    [RIGMAT_JOINT_SLIDER] = { "slider", RIGMAT_JOINT_SLIDER, 1, 0, { ".position", ".velocity" },
        LINEAR_Q, RIGMAT_Q_FORCE, RIGMAT_Q_LIN_STIFFNESS, RIGMAT_Q_LIN_DAMPING, 1, 1,
        slider_keys, NW(slider_keys), slider_relations },
    [RIGMAT_JOINT_HINGE] = { "hinge", RIGMAT_JOINT_HINGE, 1, 1, { ".angle", ".rate" },
        ANGULAR_Q, RIGMAT_Q_TORQUE, RIGMAT_Q_ROT_STIFFNESS, RIGMAT_Q_ROT_DAMPING, 1, 0,
        hinge_keys, NW(hinge_keys), hinge_relations },
    /* rolling: the coordinate is the travel of the wheel's centre */
    [RIGMAT_JOINT_ROLLING] = { "rolling", RIGMAT_JOINT_ROLLING, 1, 0,
        { ".position", ".velocity" }, LINEAR_Q, RIGMAT_Q_FORCE, RIGMAT_Q_LIN_STIFFNESS,
        RIGMAT_Q_LIN_DAMPING, 0, 0, rolling_keys, NW(rolling_keys), rolling_relations },
    /* a weld has no coordinate; its units are never printed */
    [RIGMAT_JOINT_FIXED] = { "fixed", RIGMAT_JOINT_FIXED, 0, 0, { ".position", ".velocity" },
        LINEAR_Q, RIGMAT_Q_FORCE, RIGMAT_Q_LIN_STIFFNESS, RIGMAT_Q_LIN_DAMPING, 0, 0,
        NULL, 0, fixed_relations },
};

const rigmat_joint_desc *rigmat_joint_kind(rigmat_joint_type t)
{
    return &rigmat_joint_kinds[(unsigned)t < RIGMAT_NJOINT_TYPES ? t : RIGMAT_JOINT_FIXED];
}

const char *rigmat_joint_unit(const rigmat_joint *j, int order)
{
    return rigmat_units_kind_symbol(rigmat_joint_kind(j->type)->q[order]);
}

rigmat_kind rigmat_joint_driven_kind(const rigmat_joint *j)
{
    const rigmat_joint_desc *d = rigmat_joint_kind(j->type);
    /* position-driven: the input is the coordinate itself */
    switch (j->driven) {
    case RIGMAT_DRIVEN_NONE:
    case RIGMAT_DRIVEN_POSITION: return d->q[0];
    case RIGMAT_DRIVEN_VELOCITY: return d->q[1];
    case RIGMAT_DRIVEN_ACCELERATION: return d->q[2];
    }
    return d->q[0];
}

size_t rigmat_joint_words(const char **out, size_t max)
{
    size_t i, n = 0;
    for (i = 0; i < RIGMAT_NJOINT_TYPES && n < max; i++)
        out[n++] = rigmat_joint_kinds[i].word;
    return n;
}

/* ------------------------------------------------------------ sensors */

const char *const rigmat_sensor_common_keys[] = { "measures", "of", "gain", "offset", "noise",
    "density", "bandwidth", "resolution", "bias", "filter", "part" };
const size_t rigmat_sensor_ncommon_keys = NW(rigmat_sensor_common_keys);
const char *const rigmat_sensor_all_keys[] = { "measures", "of", "at", "axis", "gain", "offset",
    "noise", "density", "bandwidth", "resolution", "counts_per_rev", "unit", "bias", "filter",
    "part" };
const size_t rigmat_sensor_nall_keys = NW(rigmat_sensor_all_keys);

static const char *const encoder_units[] = { "rad", "counts" };

static const rigmat_key_spec point_sensor_keys[] = {
    { "at", RIGMAT_KEY_POINT, RIGMAT_Q_LENGTH, RIGMAT_RANGE_ANY, 0, NULL,
      offsetof(rigmat_sensor, at_m), NULL, 0, NULL, NULL },
    { "axis", RIGMAT_KEY_AXIS, RIGMAT_Q_NUMBER, RIGMAT_RANGE_ANY, 1,
      "the world axis: x, y or a vector", offsetof(rigmat_sensor, axis), NULL, 0, NULL, NULL },
};
static const rigmat_key_spec accelerometer_keys[] = {
    { "at", RIGMAT_KEY_POINT, RIGMAT_Q_LENGTH, RIGMAT_RANGE_ANY, 1,
      "where the accelerometer sits on the body: [x, y]", offsetof(rigmat_sensor, at_m), NULL,
      0, NULL, NULL },
    { "axis", RIGMAT_KEY_AXIS, RIGMAT_Q_NUMBER, RIGMAT_RANGE_ANY, 1,
      "the body axis it reads: x, y or a vector", offsetof(rigmat_sensor, axis), NULL, 0, NULL,
      NULL },
};
static const rigmat_key_spec encoder_keys[] = {
    { "counts_per_rev", RIGMAT_KEY_NUMBER, RIGMAT_Q_NUMBER, RIGMAT_RANGE_POSITIVE, 0, NULL,
      offsetof(rigmat_sensor, counts_per_rev), NULL, 0, NULL, NULL },
    { "unit", RIGMAT_KEY_WORD, RIGMAT_Q_NUMBER, RIGMAT_RANGE_ANY, 0, NULL,
      offsetof(rigmat_sensor, unit_counts), encoder_units, NW(encoder_units), "rad or counts",
      "counts_per_rev" },
};

static const char *encoder_output_unit(const rigmat_sensor *s)
{
    return s->unit_counts ? "counts" : NULL;
}

/* An encoder without a stated resolution is quantized to one decoded
 * count (common practice); in counts its reading is scaled by counts per
 * radian. */
static void encoder_noise(const rigmat_sensor *s, double *scale, double *resolution)
{
    *scale = 1.0;
    *resolution = s->resolution;
    if (s->counts_per_rev > 0.0) {
        if (*resolution == 0.0)
            *resolution = 2.0 * M_PI / s->counts_per_rev;
        if (s->unit_counts)
            *scale = s->counts_per_rev / (2.0 * M_PI);
    }
}

static const char *const fixed_joint_hint = "to measure a point of a body, give 'at' and 'axis'";
static const char *const pair_hint = "write of: [A, B]; the sensor reads B minus A";

const rigmat_sensor_desc rigmat_sensor_kinds[RIGMAT_NSENSOR_KINDS] = {
    [RIGMAT_SENSE_JOINT_POSITION] = { "position", RIGMAT_SENSE_JOINT_POSITION, RIGMAT_OF_JOINT,
        NULL, 0, RIGMAT_MEASURED_COORD, RIGMAT_Q_NUMBER, RIGMAT_NEED_MOVING, fixed_joint_hint,
        encoder_keys, NW(encoder_keys), encoder_output_unit, encoder_noise },
    [RIGMAT_SENSE_JOINT_VELOCITY] = { "velocity", RIGMAT_SENSE_JOINT_VELOCITY, RIGMAT_OF_JOINT,
        NULL, 0, RIGMAT_MEASURED_RATE, RIGMAT_Q_NUMBER, RIGMAT_NEED_MOVING, fixed_joint_hint,
        NULL, 0, NULL, NULL },
    [RIGMAT_SENSE_ANGLE] = { "angle", RIGMAT_SENSE_ANGLE, RIGMAT_OF_BODY, NULL, 0,
        RIGMAT_MEASURED_FIXED, RIGMAT_Q_ANGLE, RIGMAT_NEED_ANY, NULL, encoder_keys,
        NW(encoder_keys), encoder_output_unit, encoder_noise },
    [RIGMAT_SENSE_RATE] = { "rate", RIGMAT_SENSE_RATE, RIGMAT_OF_BODY, NULL, 0,
        RIGMAT_MEASURED_FIXED, RIGMAT_Q_ANGULAR_RATE, RIGMAT_NEED_ANY, NULL, NULL, 0, NULL,
        NULL },
    [RIGMAT_SENSE_RELATIVE_ANGLE] = { "relative_angle", RIGMAT_SENSE_RELATIVE_ANGLE,
        RIGMAT_OF_BODY_PAIR, pair_hint, 0, RIGMAT_MEASURED_FIXED, RIGMAT_Q_ANGLE,
        RIGMAT_NEED_ANY, NULL, encoder_keys, NW(encoder_keys), encoder_output_unit,
        encoder_noise },
    [RIGMAT_SENSE_RELATIVE_RATE] = { "relative_rate", RIGMAT_SENSE_RELATIVE_RATE,
        RIGMAT_OF_BODY_PAIR, pair_hint, 0, RIGMAT_MEASURED_FIXED, RIGMAT_Q_ANGULAR_RATE,
        RIGMAT_NEED_ANY, NULL, NULL, 0, NULL, NULL },
    [RIGMAT_SENSE_MOTOR_ANGLE] = { "motor_angle", RIGMAT_SENSE_MOTOR_ANGLE, RIGMAT_OF_MOTOR,
        NULL, 0, RIGMAT_MEASURED_FIXED, RIGMAT_Q_ANGLE, RIGMAT_NEED_ANY, NULL, encoder_keys,
        NW(encoder_keys), encoder_output_unit, encoder_noise },
    [RIGMAT_SENSE_POINT_POSITION] = { "position", RIGMAT_SENSE_POINT_POSITION, RIGMAT_OF_BODY,
        NULL, 1, RIGMAT_MEASURED_FIXED, RIGMAT_Q_LENGTH, RIGMAT_NEED_ANY, NULL,
        point_sensor_keys, NW(point_sensor_keys), NULL, NULL },
    [RIGMAT_SENSE_POINT_VELOCITY] = { "velocity", RIGMAT_SENSE_POINT_VELOCITY, RIGMAT_OF_BODY,
        NULL, 1, RIGMAT_MEASURED_FIXED, RIGMAT_Q_VELOCITY, RIGMAT_NEED_ANY, NULL,
        point_sensor_keys, NW(point_sensor_keys), NULL, NULL },
    [RIGMAT_SENSE_SPECIFIC_FORCE] = { "specific_force", RIGMAT_SENSE_SPECIFIC_FORCE,
        RIGMAT_OF_BODY, NULL, 0, RIGMAT_MEASURED_FIXED, RIGMAT_Q_ACCELERATION, RIGMAT_NEED_ANY,
        NULL, accelerometer_keys, NW(accelerometer_keys), NULL, NULL },
    [RIGMAT_SENSE_CURRENT] = { "current", RIGMAT_SENSE_CURRENT, RIGMAT_OF_MOTOR, NULL, 0,
        RIGMAT_MEASURED_FIXED, RIGMAT_Q_CURRENT, RIGMAT_NEED_ANY, NULL, NULL, 0, NULL, NULL },
    [RIGMAT_SENSE_DRIVE_FORCE] = { "drive_force", RIGMAT_SENSE_DRIVE_FORCE, RIGMAT_OF_JOINT,
        NULL, 0, RIGMAT_MEASURED_EFFORT, RIGMAT_Q_NUMBER, RIGMAT_NEED_DRIVEN,
        "only a driven joint has a drive force; add 'driven:' to the joint", NULL, 0, NULL,
        NULL },
};

const rigmat_sensor_desc *rigmat_sensor_kind_desc(rigmat_sensor_kind k)
{
    return &rigmat_sensor_kinds[(unsigned)k < RIGMAT_NSENSOR_KINDS ? k : 0];
}

rigmat_kind rigmat_sensor_measured_kind(const rigmat_model *m, const rigmat_sensor *s)
{
    const rigmat_sensor_desc *d = rigmat_sensor_kind_desc(s->kind);
    const rigmat_joint_desc *jd;

    if (d->from == RIGMAT_MEASURED_FIXED)
        return d->measured;
    if (s->joint == RIGMAT_NONE || s->joint >= m->njoints)
        return RIGMAT_Q_NUMBER;
    jd = rigmat_joint_kind(m->joints[s->joint].type);
    switch (d->from) {
    case RIGMAT_MEASURED_COORD: return jd->q[0];
    case RIGMAT_MEASURED_RATE: return jd->q[1];
    case RIGMAT_MEASURED_EFFORT: return jd->effort;
    case RIGMAT_MEASURED_FIXED: break;
    }
    return d->measured;
}

const char *rigmat_sensor_measured_unit(const rigmat_model *m, const rigmat_sensor *s)
{
    return rigmat_units_kind_symbol(rigmat_sensor_measured_kind(m, s));
}

const char *rigmat_sensor_output_unit(const rigmat_model *m, const rigmat_sensor *s)
{
    const rigmat_sensor_desc *d = rigmat_sensor_kind_desc(s->kind);
    const char *u = d->output_unit != NULL ? d->output_unit(s) : NULL;

    return u != NULL ? u : rigmat_sensor_measured_unit(m, s);
}

void rigmat_sensor_noise_rule(const rigmat_sensor *s, double *scale, double *resolution)
{
    const rigmat_sensor_desc *d = rigmat_sensor_kind_desc(s->kind);

    if (d->noise_rule != NULL) {
        d->noise_rule(s, scale, resolution);
        return;
    }
    *scale = 1.0;
    *resolution = s->resolution;
}

size_t rigmat_sensor_words(const char **out, size_t max)
{
    size_t i, k, n = 0;
    for (i = 0; i < RIGMAT_NSENSOR_KINDS && n < max; i++) {
        for (k = 0; k < n; k++)
            if (strcmp(out[k], rigmat_sensor_kinds[i].word) == 0)
                break;
        if (k == n)
            out[n++] = rigmat_sensor_kinds[i].word;
    }
    return n;
}

/* ------------------------------------------------------------ forces */

static const char *const point_force_keys[] = { "on", "at", "direction", "frame", "role",
    "density", "bandwidth", "limit", "part" };
static const char *const torque_keys[] = { "torque_on", "reacting", "role", "density",
    "bandwidth", "limit", "part" };
static const char *const across_force_keys[] = { "across", "role", "density", "bandwidth",
    "limit", "part" };
const char *const rigmat_force_all_keys[] = { "on", "at", "direction", "frame", "torque_on",
    "reacting", "across", "role", "density", "bandwidth", "limit", "part" };
const size_t rigmat_force_nall_keys = NW(rigmat_force_all_keys);

const rigmat_force_desc rigmat_force_kinds[RIGMAT_NFORCE_FORMS] = {
    [RIGMAT_FORCE_POINT] = { "on", RIGMAT_FORCE_POINT, "a force 'on' a body", 0,
        RIGMAT_Q_FORCE, point_force_keys, NW(point_force_keys) },
    [RIGMAT_FORCE_TORQUE] = { "torque_on", RIGMAT_FORCE_TORQUE, "a torque", 0, RIGMAT_Q_TORQUE,
        torque_keys, NW(torque_keys) },
    [RIGMAT_FORCE_ACROSS] = { "across", RIGMAT_FORCE_ACROSS, "a force across a joint", 1,
        RIGMAT_Q_FORCE, across_force_keys, NW(across_force_keys) },
};

const rigmat_force_desc *rigmat_force_kind_desc(rigmat_force_kind k)
{
    return &rigmat_force_kinds[(unsigned)k < RIGMAT_NFORCE_FORMS ? k : 0];
}

rigmat_kind rigmat_force_effort(const rigmat_model *m, const rigmat_force *f)
{
    const rigmat_force_desc *d = rigmat_force_kind_desc(f->kind);

    if (!d->effort_from_joint)
        return d->effort;
    if (f->joint == RIGMAT_NONE || f->joint >= m->njoints)
        return RIGMAT_Q_NUMBER;
    return rigmat_joint_kind(m->joints[f->joint].type)->effort;
}

/* ------------------------------------------------------------ shapes */

static const rigmat_key_spec rod_keys[] = {
    { "length", RIGMAT_KEY_NUMBER, RIGMAT_Q_LENGTH, RIGMAT_RANGE_POSITIVE, 1, NULL,
      offsetof(rigmat_body, length_m), NULL, 0, NULL, NULL },
    { "direction", RIGMAT_KEY_NUMBER, RIGMAT_Q_ANGLE, RIGMAT_RANGE_ANY, 0, NULL,
      offsetof(rigmat_body, direction_rad), NULL, 0, NULL, NULL },
};
static const rigmat_key_spec box_keys[] = {
    { "width", RIGMAT_KEY_NUMBER, RIGMAT_Q_LENGTH, RIGMAT_RANGE_POSITIVE, 1, NULL,
      offsetof(rigmat_body, width_m), NULL, 0, NULL, NULL },
    { "height", RIGMAT_KEY_NUMBER, RIGMAT_Q_LENGTH, RIGMAT_RANGE_POSITIVE, 1, NULL,
      offsetof(rigmat_body, height_m), NULL, 0, NULL, NULL },
};
static const rigmat_key_spec round_keys[] = {
    { "radius", RIGMAT_KEY_NUMBER, RIGMAT_Q_LENGTH, RIGMAT_RANGE_POSITIVE, 1, NULL,
      offsetof(rigmat_body, radius_m), NULL, 0, NULL, NULL },
};

/* Moments of inertia about the centre of mass (common practice, any
 * handbook table of moments of inertia). */
static double given_inertia(const rigmat_body *b, double m)
{
    (void)m;
    return b->inertia_kgm2;
}
static double point_inertia(const rigmat_body *b, double m)
{
    (void)b;
    (void)m;
    return 0.0;
}
static double rod_inertia(const rigmat_body *b, double m)
{
    return m * b->length_m * b->length_m / 12.0;
}
static double disc_inertia(const rigmat_body *b, double m)
{
    return m * b->radius_m * b->radius_m / 2.0;
}
static double ring_inertia(const rigmat_body *b, double m)
{
    return m * b->radius_m * b->radius_m;
}
/* a solid sphere's 3-D moment about the axis, also for a planar model of it rolling */
static double sphere_inertia(const rigmat_body *b, double m)
{
    return 0.4 * m * b->radius_m * b->radius_m;
}
static double box_inertia(const rigmat_body *b, double m)
{
    return m * (b->width_m * b->width_m + b->height_m * b->height_m) / 12.0;
}

/* a rod's centre of mass is its middle */
static void rod_centre(rigmat_body *b)
{
    b->com_m[0] = 0.5 * b->length_m * cos(b->direction_rad);
    b->com_m[1] = 0.5 * b->length_m * sin(b->direction_rad);
}

static void point_describe(const rigmat_body *b, char *buf, size_t len)
{
    (void)b;
    snprintf(buf, len, " (point)");
}
static void rod_describe(const rigmat_body *b, char *buf, size_t len)
{
    snprintf(buf, len, " (rod, length %.6g m, direction %.6g deg)", b->length_m,
            b->direction_rad * 180.0 / M_PI);
}
static void box_describe(const rigmat_body *b, char *buf, size_t len)
{
    snprintf(buf, len, " (box %.6g m x %.6g m)", b->width_m, b->height_m);
}
static void round_describe(const rigmat_body *b, char *buf, size_t len)
{
    snprintf(buf, len, " (%s, radius %.6g m)", rigmat_shape_kind_desc(b->shape)->word,
            b->radius_m);
}

const rigmat_shape_desc rigmat_shape_kinds[RIGMAT_NSHAPES] = {
    [RIGMAT_SHAPE_GIVEN] = { "given", RIGMAT_SHAPE_GIVEN, "a body", NULL, 0, given_inertia,
        NULL, NULL, NULL },
    [RIGMAT_SHAPE_POINT] = { "point", RIGMAT_SHAPE_POINT, "a point", NULL, 0, point_inertia,
        NULL, NULL, point_describe },
    [RIGMAT_SHAPE_ROD] = { "rod", RIGMAT_SHAPE_ROD, "a rod", rod_keys, NW(rod_keys),
        rod_inertia, rod_centre, "a rod's centre of mass is its middle, and its origin one "
        "end: hinge it there and hang the next joint 'at: end' (README.md, \"A rod hinged at "
        "its end\"); for another centre give 'inertia' and 'com'", rod_describe },
    [RIGMAT_SHAPE_DISC] = { "disc", RIGMAT_SHAPE_DISC, "this shape", round_keys,
        NW(round_keys), disc_inertia, NULL, NULL, round_describe },
    [RIGMAT_SHAPE_RING] = { "ring", RIGMAT_SHAPE_RING, "this shape", round_keys,
        NW(round_keys), ring_inertia, NULL, NULL, round_describe },
    [RIGMAT_SHAPE_SPHERE] = { "sphere", RIGMAT_SHAPE_SPHERE, "this shape", round_keys,
        NW(round_keys), sphere_inertia, NULL, NULL, round_describe },
    [RIGMAT_SHAPE_BOX] = { "box", RIGMAT_SHAPE_BOX, "a box", box_keys, NW(box_keys),
        box_inertia, NULL, NULL, box_describe },
};

const rigmat_shape_desc *rigmat_shape_kind_desc(rigmat_shape s)
{
    return &rigmat_shape_kinds[(unsigned)s < RIGMAT_NSHAPES ? s : RIGMAT_SHAPE_GIVEN];
}

size_t rigmat_shape_words(const char **out, size_t max)
{
    size_t i, n = 0;
    for (i = 0; i < RIGMAT_NSHAPES && n < max; i++)
        if (rigmat_shape_kinds[i].shape != RIGMAT_SHAPE_GIVEN)
            out[n++] = rigmat_shape_kinds[i].word;
    return n;
}

/* ------------------------------------------------------------ motors */

const rigmat_drive_desc rigmat_drive_kinds[RIGMAT_NMOTOR_DRIVES] = {
    [RIGMAT_DRIVE_VOLTAGE] = { "voltage", RIGMAT_DRIVE_VOLTAGE, RIGMAT_Q_VOLTAGE, 1, 0 },
    /* a current drive sets the winding current: no current state */
    [RIGMAT_DRIVE_CURRENT] = { "current", RIGMAT_DRIVE_CURRENT, RIGMAT_Q_CURRENT, 0, 0 },
    /* duty in [-1, 1] of the supply voltage */
    [RIGMAT_DRIVE_DUTY] = { "duty", RIGMAT_DRIVE_DUTY, RIGMAT_Q_NUMBER, 1, 1 },
};

const rigmat_drive_desc *rigmat_drive_kind_desc(rigmat_motor_drive d)
{
    return &rigmat_drive_kinds[(unsigned)d < RIGMAT_NMOTOR_DRIVES ? d : 0];
}

size_t rigmat_drive_words(const char **out, size_t max)
{
    size_t i, n = 0;
    for (i = 0; i < RIGMAT_NMOTOR_DRIVES && n < max; i++)
        out[n++] = rigmat_drive_kinds[i].word;
    return n;
}

static const char *const circuit_keys[] = { "resistance", "torque_constant",
    "back_emf_constant" };
static const char *const datasheet_keys[] = { "rated_voltage", "stall_torque", "stall_current",
    "no_load_speed", "no_load_current", "figures_at" };

const rigmat_motor_form_desc rigmat_motor_forms[RIGMAT_NMOTOR_FORMS] = {
    [RIGMAT_MOTOR_CIRCUIT] = { "circuit", RIGMAT_MOTOR_CIRCUIT, circuit_keys,
        NW(circuit_keys) },
    [RIGMAT_MOTOR_DATASHEET] = { "datasheet", RIGMAT_MOTOR_DATASHEET, datasheet_keys,
        NW(datasheet_keys) },
};
