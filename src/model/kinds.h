/* kinds.h - one descriptor table per family of model parts: joint types,
 * sensor kinds, force forms, body shapes, motor drives and motor forms.
 *
 * Each entry holds what every stage needs to know about its kind: the word
 * a model file uses, its enum, its coordinate names and units, the keys it
 * accepts and requires with each key's unit kind, and the few functions
 * where a stage needs behaviour that data cannot say (a sensor's unit when
 * it reads counts, its noise rule, a shape's inertia).  The loader
 * (load.c), the layout (layout.c), the mechanics (src/mech/mechanics.c,
 * indexed by the same enums) and the command line read these tables; no
 * other file tests a kind by name.  Adding a kind is one entry here (in
 * kinds.c), its behaviour in the tables of src/mech/mechanics.c, and its
 * enum constant in rigmat.h (DEVELOPERS.md, "Adding a joint type or a
 * sensor kind").
 *
 * The tables are indexed by the enums of src/util/rigmat_internal.h and each entry
 * repeats its enum, so a table out of order fails the kinds test.
 */
#ifndef RIGMAT_KINDS_H
#define RIGMAT_KINDS_H

#include "rigmat_internal.h"
#include "units.h"

/* Entries in each table (the enums of rigmat.h have exactly these many). */
#define RIGMAT_NJOINT_TYPES ((size_t)RIGMAT_JOINT_TYPE_COUNT)
#define RIGMAT_NSENSOR_KINDS ((size_t)RIGMAT_SENSE_KIND_COUNT)
#define RIGMAT_NFORCE_FORMS 3
#define RIGMAT_NSHAPES 7
#define RIGMAT_NMOTOR_DRIVES 3
#define RIGMAT_NMOTOR_FORMS 2

/* ------------------------------------------------------------ keys */

/* How a key's value is read. */
typedef enum rigmat_key_type {
    RIGMAT_KEY_NUMBER,    /* a quantity of .kind (double) */
    RIGMAT_KEY_POINT,     /* [x, y], each of .kind (double[2]) */
    RIGMAT_KEY_DIRECTION, /* a unit vector: [x, y] or an angle from +x (double[2]) */
    RIGMAT_KEY_AXIS,      /* x, y or a vector (double[2], unit length) */
    RIGMAT_KEY_WORD       /* one of .words; int: 1 when the word is not the first */
} rigmat_key_type;

/* The range a number must lie in, checked after it reads. */
typedef enum rigmat_key_range {
    RIGMAT_RANGE_ANY = 0, RIGMAT_RANGE_NONNEG, RIGMAT_RANGE_POSITIVE
} rigmat_key_range;

/* A key one kind accepts beyond those common to its family. */
typedef struct rigmat_key_spec {
    const char *key;
    rigmat_key_type type;
    rigmat_kind kind;         /* NUMBER, POINT: the unit kind */
    rigmat_key_range range;   /* NUMBER */
    int required;             /* missing is an error, with .hint */
    const char *hint;         /* for a missing required key, or NULL */
    size_t offset;            /* where the value goes in the part's struct (offsetof) */
    const char *const *words; /* WORD: the words, the first one the default */
    size_t nwords;
    const char *what;         /* WORD: "a reference (parent or world)" */
    const char *needs;        /* WORD: a word other than the first needs this key too */
} rigmat_key_spec;

/* ------------------------------------------------------------ joints */

typedef struct rigmat_joint_desc {
    const char *word;            /* `type:` word: "hinge" */
    rigmat_joint_type type;
    int has_coordinate;          /* 0 for a weld */
    int rotational;              /* the coordinate is the child's angle (about the joint) */
    const char *suffix[2];       /* state names: coordinate, rate (".angle", ".rate") */
    rigmat_kind q[3];            /* unit kinds of the coordinate, its rate, its acceleration */
    rigmat_kind effort;          /* force or torque along the coordinate */
    rigmat_kind stiffness, damping; /* of a spring / damper across it */
    int drivable;                /* accepts `driven:` */
    int motor_linear;            /* a motor across it turns a pulley or screw (radius, lead) */
    const rigmat_key_spec *keys; /* keys of this type beyond the common ones */
    size_t nkeys;
    /* check's description of how the child's angle and place follow from
     * the coordinate ("chassis angle = wheel angle + tilt"), into angle and
     * place. */
    void (*relations)(const rigmat_model *m, const rigmat_joint *j, char *angle, size_t alen,
            char *place, size_t plen);
} rigmat_joint_desc;

/* Keys common to every joint, and every key any joint accepts (for
 * "does not apply to" messages and hints). */
extern const char *const rigmat_joint_common_keys[];
extern const size_t rigmat_joint_ncommon_keys;
extern const char *const rigmat_joint_all_keys[];
extern const size_t rigmat_joint_nall_keys;
/* The keys a driven joint adds after `driven`. */
extern const char *const rigmat_joint_driven_keys[];
extern const size_t rigmat_joint_ndriven_keys;

extern const rigmat_joint_desc rigmat_joint_kinds[RIGMAT_NJOINT_TYPES];
/* The entry of a type (never NULL for a type of the enum). */
const rigmat_joint_desc *rigmat_joint_kind(rigmat_joint_type t);
/* The unit symbol of a joint's coordinate (order 0), rate (1), acceleration (2). */
const char *rigmat_joint_unit(const rigmat_joint *j, int order);
/* The unit kind of a joint's driven input (its driven derivative). */
rigmat_kind rigmat_joint_driven_kind(const rigmat_joint *j);

/* ------------------------------------------------------------ sensors */

/* What a sensor's `of` names. */
typedef enum rigmat_sensor_of {
    RIGMAT_OF_JOINT, RIGMAT_OF_BODY, RIGMAT_OF_BODY_PAIR, RIGMAT_OF_MOTOR
} rigmat_sensor_of;

/* Where the measured quantity's unit comes from. */
typedef enum rigmat_measured_from {
    RIGMAT_MEASURED_FIXED = 0, /* .measured */
    RIGMAT_MEASURED_COORD,     /* the joint's coordinate */
    RIGMAT_MEASURED_RATE,      /* the joint's rate */
    RIGMAT_MEASURED_EFFORT     /* the force or torque along the joint */
} rigmat_measured_from;

/* What the joint a sensor reads must be. */
typedef enum rigmat_joint_need {
    RIGMAT_NEED_ANY = 0, RIGMAT_NEED_MOVING, RIGMAT_NEED_DRIVEN
} rigmat_joint_need;

typedef struct rigmat_sensor_desc {
    const char *word;            /* `measures:` word; two kinds may share one (see point_form) */
    rigmat_sensor_kind kind;
    rigmat_sensor_of of;
    const char *of_hint;         /* BODY_PAIR: the hint for a malformed `of` */
    int point_form;              /* chosen over the kind of the same word when `at` or `axis` is given */
    rigmat_measured_from from;
    rigmat_kind measured;        /* FIXED: the unit kind of the measured quantity */
    rigmat_joint_need joint_need;
    const char *joint_hint;      /* the hint when the joint is not what joint_need asks */
    const rigmat_key_spec *keys; /* keys beyond the common ones */
    size_t nkeys;
    /* The reading's unit when it differs from the measured quantity's
     * (a motor angle in counts), else NULL; the offset is then a plain
     * number in the reading's unit. */
    const char *(*output_unit)(const rigmat_sensor *s);
    /* Noise rule: the factor from the measured quantity's unit to the
     * reading's (before |gain|) and the quantization step in the measured
     * unit; NULL: 1 and the sensor's resolution. */
    void (*noise_rule)(const rigmat_sensor *s, double *scale, double *resolution);
} rigmat_sensor_desc;

extern const rigmat_sensor_desc rigmat_sensor_kinds[RIGMAT_NSENSOR_KINDS];
/* Keys common to every sensor, and every key any sensor accepts. */
extern const char *const rigmat_sensor_common_keys[];
extern const size_t rigmat_sensor_ncommon_keys;
extern const char *const rigmat_sensor_all_keys[];
extern const size_t rigmat_sensor_nall_keys;
const rigmat_sensor_desc *rigmat_sensor_kind_desc(rigmat_sensor_kind k);
/* The unit kind of what a sensor measures (before gain); RIGMAT_Q_NUMBER
 * when it reads a joint that did not resolve. */
rigmat_kind rigmat_sensor_measured_kind(const rigmat_model *m, const rigmat_sensor *s);
/* Its unit symbol, and the unit of its reading (the output's unit). */
const char *rigmat_sensor_measured_unit(const rigmat_model *m, const rigmat_sensor *s);
const char *rigmat_sensor_output_unit(const rigmat_model *m, const rigmat_sensor *s);
/* The sensor's noise rule (see noise_rule above). */
void rigmat_sensor_noise_rule(const rigmat_sensor *s, double *scale, double *resolution);

/* ------------------------------------------------------------ forces */

typedef struct rigmat_force_desc {
    const char *word;            /* the placement key: "on", "torque_on", "across" */
    rigmat_force_kind kind;
    const char *form;            /* "a force 'on' a body" (for messages) */
    int effort_from_joint;       /* the unit follows the joint (across) */
    rigmat_kind effort;          /* else this */
    const char *const *keys;     /* every key this form accepts */
    size_t nkeys;
} rigmat_force_desc;

extern const rigmat_force_desc rigmat_force_kinds[RIGMAT_NFORCE_FORMS];
/* Every key any force accepts. */
extern const char *const rigmat_force_all_keys[];
extern const size_t rigmat_force_nall_keys;
const rigmat_force_desc *rigmat_force_kind_desc(rigmat_force_kind k);
/* The unit kind of a force's value (RIGMAT_Q_NUMBER when across a joint
 * that did not resolve). */
rigmat_kind rigmat_force_effort(const rigmat_model *m, const rigmat_force *f);

/* ------------------------------------------------------------ shapes */

typedef struct rigmat_shape_desc {
    const char *word;            /* "disc"; "given" for inertia written out */
    rigmat_shape shape;
    const char *keys_form;       /* "a rod", for "unknown key" messages */
    const rigmat_key_spec *keys; /* its dimensions */
    size_t nkeys;
    /* Inertia about the centre of mass of mass m (common practice:
     * rod m L^2/12, disc m r^2/2, ring m r^2, solid sphere 2/5 m r^2,
     * box m (w^2 + h^2)/12, point 0). */
    double (*inertia)(const rigmat_body *b, double m);
    /* For a shape that fixes the centre of mass (a rod: its middle): set
     * b->com_m; NULL when `com` is free.  com_hint explains it. */
    void (*centre)(rigmat_body *b);
    const char *com_hint;
    /* check's description of the dimensions, "rod, length 0.5 m, ..." into
     * buf; NULL prints nothing. */
    void (*describe)(const rigmat_body *b, char *buf, size_t len);
} rigmat_shape_desc;

extern const rigmat_shape_desc rigmat_shape_kinds[RIGMAT_NSHAPES];
const rigmat_shape_desc *rigmat_shape_kind_desc(rigmat_shape s);

/* ------------------------------------------------------------ motors */

typedef struct rigmat_drive_desc {
    const char *word;            /* `drive:` word */
    rigmat_motor_drive drive;
    rigmat_kind input;           /* unit kind of the motor's input */
    int has_current_state;       /* the winding current is a state (unless L is neglected) */
    int needs_supply;            /* `supply` is required, and accepted only here */
} rigmat_drive_desc;

extern const rigmat_drive_desc rigmat_drive_kinds[RIGMAT_NMOTOR_DRIVES];
const rigmat_drive_desc *rigmat_drive_kind_desc(rigmat_motor_drive d);

/* The two ways a motor's values are given. */
typedef enum rigmat_motor_form { RIGMAT_MOTOR_CIRCUIT = 0, RIGMAT_MOTOR_DATASHEET } rigmat_motor_form;

typedef struct rigmat_motor_form_desc {
    const char *word;            /* "circuit", "datasheet" */
    rigmat_motor_form form;
    const char *const *keys;     /* the keys that show this form is meant */
    size_t nkeys;
} rigmat_motor_form_desc;

extern const rigmat_motor_form_desc rigmat_motor_forms[RIGMAT_NMOTOR_FORMS];

/* ------------------------------------------------------------ words */

/* The words of a family in table order, each once (two sensor kinds share
 * "position" and "velocity"), into out (up to max); returns the count.
 * These fill the "did you mean" hints. */
size_t rigmat_joint_words(const char **out, size_t max);
size_t rigmat_sensor_words(const char **out, size_t max);
size_t rigmat_drive_words(const char **out, size_t max);
/* The shapes a model may name (all but "given"). */
size_t rigmat_shape_words(const char **out, size_t max);

#endif /* RIGMAT_KINDS_H */
