/* rigmat_internal.h - the internal header of librigmat: every model
 * struct with all its fields, the layout, the linear model, the error and
 * diagnostics records, and the functions of the stages that share them.
 * It is not installed; programs outside the tree use the public API of
 * include/rigmat.h (implemented over this header in src/lib/), whose
 * opaque rigmat_model and rigmat_diags are the structs defined here.
 *
 * Conventions used throughout:
 *   - every double is SI; a double with a physical meaning carries its unit
 *     in its name (mass_kg, radius_m, rate_hz);
 *   - angles are radians, counter-clockwise positive; world x right, y up;
 *   - functions return a rigmat_status and, on failure, fill a caller-owned
 *     rigmat_error (which may be NULL);
 *   - GSL's default error handler aborts the process.  Programs linking
 *     librigmat must call gsl_set_error_handler_off() once, first (before
 *     starting any thread: the handler is process-wide): rigmat checks
 *     every GSL status itself.
 *
 * THREAD SAFETY
 *   Every function is reentrant for separate objects: librigmat keeps no
 *   process-wide state, never changes the signal mask, the locale or the
 *   GSL error handler, reads no environment variable, and reads numbers
 *   the same in every locale (a model's "0.8 kg" is 0.8 kg under a
 *   comma-decimal LC_NUMERIC too).  Hence:
 *     - May be shared by threads: a rigmat_model once rigmat_model_load has
 *       returned (read only from then on; rigmat_linearize, rigmat_trim_model
 *       and rigmat_system_alloc take it const), a rigmat_lti, rigmat_dlti or
 *       rigmat_noise that no thread modifies, and rigmat_options.
 *     - One thread at a time, each: a rigmat_system (it keeps scratch
 *       memory that every rigmat_system_eval and rigmat_system_jacobians
 *       call rewrites), the workspaces (rigmat_discretize_ws,
 *       rigmat_noise_ws, rigmat_expm_ws), a rigmat_diags list being
 *       filled, a rigmat_error, a rigmat_trim_result.  Give each thread its
 *       own, or lock around them.
 *     - Freeing an object while another thread uses it, or anything that
 *       borrows from it (an lti's layout points into its model), is wrong.
 *   The C library and GSL calls rigmat makes are thread-safe as used; with
 *   OpenBLAS as GSL's BLAS, use a build made for threaded callers (Debian's
 *   libopenblas0-pthread is).  tests/threads.c checks all of this under
 *   ThreadSanitizer (`make check-tsan`).
 *
 * Sampling, the noise model, the matrix exponential, units, the Riccati
 * solver and the Kalman/LQR gains have headers of their own in their stage
 * folders (discretize.h, noise.h, expm.h, units.h, riccati.h, gains.h).
 *
 * Copyright (C) 2026 the rigmat authors.  GPL-3.0-or-later.
 */
#ifndef RIGMAT_INTERNAL_H
#define RIGMAT_INTERNAL_H

#include "rigmat.h" /* the public part: status, severity, opaque handles */

#include <stddef.h>
#include <stdio.h>
#include <gsl/gsl_matrix.h>
#include <gsl/gsl_vector.h>

#if defined(__GNUC__) || defined(__clang__)
#define RIGMAT_PRINTF(fmt, args) __attribute__((format(printf, fmt, args)))
#else
#define RIGMAT_PRINTF(fmt, args)
#endif

/* ---------------------------------------------------------------- status */

/* rigmat_status (with the exit code of each) is in include/rigmat.h. */

/* A place in an input file. */
typedef struct rigmat_loc {
    const char *file;        /* owned by the model or diag list holding this loc */
    unsigned long line, col; /* 1-based; col counts characters; 0 = unknown */
} rigmat_loc;

/* One failure of the computation or the system, filled by the function that
 * detects it.  Plain data: only the command line prints. */
typedef struct rigmat_error {
    rigmat_status status;
    rigmat_loc where;  /* the offending value, if the failure has a place */
    rigmat_loc within; /* the entry that encloses it, if any */
    char message[256]; /* lowercase, no full stop */
    char hint[512];    /* optional; empty when there is none */
    const char *src_file; /* where rigmat raised it, for developers */
    int src_line;
} rigmat_error;

/* Fill err (which may be NULL) and return st.  Never allocates.  This is the
 * breakpoint target for every error rigmat raises. */
rigmat_status rigmat_error_set(rigmat_error *err, rigmat_status st, const char *src_file,
        int src_line, const char *fmt, ...) RIGMAT_PRINTF(5, 6);
/* Set err->hint (printf style); err may be NULL. */
void rigmat_error_hint(rigmat_error *err, const char *fmt, ...) RIGMAT_PRINTF(2, 3);
#define RIGMAT_FAIL(err, st, ...) rigmat_error_set((err), (st), __FILE__, __LINE__, __VA_ARGS__)


/* ------------------------------------------------------------ diagnostics */

/* One input diagnostic: an error, warning or note with a place. */
typedef struct rigmat_diag {
    rigmat_severity severity;
    rigmat_loc where;  /* the offending key or value */
    rigmat_loc within; /* the enclosing entry (file NULL when none) */
    char *within_what; /* "body 'chassis'", or NULL; owned */
    char *message;     /* owned */
    char *hint;        /* owned; NULL when there is none */
} rigmat_diag;

/* A list of diagnostics.  Owns copies of every string it holds, including
 * the file names its locs point at. */
struct rigmat_diags { /* opaque in include/rigmat.h */
    rigmat_diag *items;
    size_t count, cap;
    size_t errors;     /* errors found: those recorded plus those dropped */
    size_t max_errors; /* stop recording errors past this (default 50) */
    size_t dropped;    /* errors not recorded because of max_errors */
    char **files;      /* interned file names */
    size_t nfiles;
};

void rigmat_diags_init(rigmat_diags *d);
void rigmat_diags_release(rigmat_diags *d);
/* Record a diagnostic; returns RIGMAT_ENOMEM only if memory ran out.
 * within_what and hint may be NULL. */
rigmat_status rigmat_diags_add(rigmat_diags *d, rigmat_severity sev, rigmat_loc where,
        rigmat_loc within, const char *within_what, const char *hint, const char *fmt, ...)
        RIGMAT_PRINTF(7, 8);
/* Intern a file name; the returned pointer lives as long as d. */
const char *rigmat_diags_file(rigmat_diags *d, const char *name);
/* rigmat_diags_print is declared in include/rigmat.h. */

/* ---------------------------------------------------------------- options */

/* Limits and tolerances travel here; no globals.  rigmat_options_default()
 * gives the documented defaults. */
typedef struct rigmat_options {
    size_t max_file_bytes;  /* default 4 MiB; per file, and for a model with its parts merged
                             * (each part counted at each use; README.md) */
    size_t max_depth;       /* YAML nesting depth, default 32 */
    size_t max_nodes;       /* YAML scalars + collections per file, and for a model with its
                             * parts merged, as max_file_bytes; default 200000 */
    size_t max_entries;     /* entries per section (bodies, joints, ...), default 1024 */
    size_t max_errors;      /* diagnostics reported before giving up, default 50 */
    size_t max_part_depth;  /* catalog parts may not nest deeper, default 4 */
    size_t max_joints;      /* joints per model, default 1024: the cost limit (README.md) */
    const char *catalog_dir;    /* --catalog, or NULL */
    const char *catalog_env;    /* $RIGMAT_CATALOG, or NULL */
    const char *catalog_share;  /* installed share folder, or NULL */
    const char *catalog_exe;    /* folder of the running program (its ../catalog), or NULL */
    double trim_tol;         /* steady-state residual tolerance (SI), default 1e-10 */
    size_t trim_max_iter;    /* default 100 */
    double rank_rtol;        /* relative singular-value threshold, default 1e-9 */
    double rate_hz;          /* sample rate for noise-per-sample figures; 0 = none */
    size_t max_sampled_states; /* states of a sampled model, plant plus input-delay
                                * stages; a larger delay is refused; default 2048
                                * (README.md, Limits) */
    int limits_refuse;       /* 1 (default): an operating point beyond an input's limit or
                              * a motor's current_limit is RIGMAT_ENUMERIC in linearize and
                              * trim; 0: the lti carries it for a report (check) */
} rigmat_options;

rigmat_options rigmat_options_default(void);

/* ------------------------------------------------------------------ units */

/* Base dimensions, in this order: mass, length, time, current, angle, cycle.
 * Angle (rad) and cycle (rev of a frequency: 1 Hz = 1 cycle/s) are kept
 * apart so Hz, rad/s and rpm never convert silently.  rpm is an angle rate
 * (2*pi/60 rad/s).  Exponents are in half units so sqrt(Hz) is exact. */
enum { RIGMAT_DIM_MASS, RIGMAT_DIM_LENGTH, RIGMAT_DIM_TIME, RIGMAT_DIM_CURRENT,
    RIGMAT_DIM_ANGLE, RIGMAT_DIM_CYCLE, RIGMAT_NDIM };

typedef struct rigmat_dim {
    signed char half[RIGMAT_NDIM]; /* exponent times two */
} rigmat_dim;

typedef struct rigmat_quantity {
    double value; /* in SI (kg, m, s, A, rad, cycle) */
    rigmat_dim dim;
} rigmat_quantity;

/* ------------------------------------------------------------------ model */

/* ground is always body 0; an index of RIGMAT_NONE means "none". */
#define RIGMAT_NONE ((size_t)-1)

typedef enum rigmat_shape {
    RIGMAT_SHAPE_GIVEN = 0, /* inertia written out (or 0: a point mass) */
    RIGMAT_SHAPE_POINT, RIGMAT_SHAPE_ROD, RIGMAT_SHAPE_DISC, RIGMAT_SHAPE_RING,
    RIGMAT_SHAPE_SPHERE, RIGMAT_SHAPE_BOX
} rigmat_shape;

typedef struct rigmat_body {
    char *name;
    rigmat_loc loc;
    double mass_kg;       /* >= 0 */
    double inertia_kgm2;  /* about the centre of mass; >= 0 (derived from shape if given) */
    double com_m[2];      /* centre of mass in the body frame */
    rigmat_shape shape;
    double length_m, direction_rad; /* rod: length, direction from the origin */
    double radius_m;                /* disc, ring, sphere */
    double width_m, height_m;       /* box */
    size_t joint;         /* the joint whose child this is; RIGMAT_NONE for ground */
} rigmat_body;

/* Joint types; what each one is (its word, coordinate, units, keys) is
 * its entry in the kind table (src/model/kinds.c). */
typedef enum rigmat_joint_type {
    RIGMAT_JOINT_SLIDER, RIGMAT_JOINT_HINGE, RIGMAT_JOINT_ROLLING, RIGMAT_JOINT_FIXED,
    RIGMAT_JOINT_TYPE_COUNT /* the number of types, not a type */
} rigmat_joint_type;

typedef enum rigmat_driven {
    RIGMAT_DRIVEN_NONE = 0, RIGMAT_DRIVEN_POSITION, RIGMAT_DRIVEN_VELOCITY,
    RIGMAT_DRIVEN_ACCELERATION
} rigmat_driven;

typedef enum rigmat_role { RIGMAT_ROLE_INPUT = 0, RIGMAT_ROLE_DISTURBANCE } rigmat_role;

typedef struct rigmat_joint {
    char *name;
    rigmat_loc loc;
    rigmat_joint_type type;
    size_t parent, child;  /* body indices */
    double at_m[2];        /* in the parent frame */
    double angle_rad;      /* child angle relative to parent at q = 0 */
    double axis[2];        /* slider: unit vector in the parent frame */
    int reference_world;   /* hinge: 1 if q is the child's world angle */
    double radius_m;       /* rolling: wheel radius, > 0 */
    rigmat_driven driven;
    rigmat_role role;      /* driven joints only */
    double density;        /* driven, disturbance: SI unit of the driven derivative per sqrt(Hz); 0 = none */
    double bandwidth_hz;   /* driven, disturbance: first-order colouring; 0 = white */
    int has_limit;         /* driven: `limit` given (README.md, "Limits" */
    double limit[2];       /* driven: [low, high] of the driven input, SI */
    /* closed loops (README.md, "Closed loops"), set by rigmat_model_check_equations */
    int in_loop;           /* the coordinate moves a closure's points: 1 + the index of
                              the first closure whose loop holds it, else 0 */
    int dependent;         /* solved from the closures: no state of its own */
    double assembled;      /* in a loop: its value at the assembled operating point */
} rigmat_joint;

/* A closure of a kinematic loop: two equations between two bodies. */
typedef enum rigmat_closure_type {
    RIGMAT_CLOSURE_HINGE,  /* point at[0] of body 0 coincides with point at[1] of body 1 */
    RIGMAT_CLOSURE_SLIDER  /* point at[1] of body 1 on the line through point at[0] of
                              body 0 along axis (body 0's frame); relative angle held */
} rigmat_closure_type;

typedef struct rigmat_closure {
    char *name;
    rigmat_loc loc;
    rigmat_closure_type type;
    size_t body[2];
    double at_m[2][2];     /* each in its own body's frame */
    double axis[2];        /* slider: unit vector in body 0's frame */
    double angle_rad;      /* slider: the relative angle held (set at assembly) */
} rigmat_closure;

/* How the independent coordinates of a model with closures were chosen. */
typedef enum rigmat_independent_how {
    RIGMAT_INDEPENDENT_NONE = 0, /* no closures */
    RIGMAT_INDEPENDENT_NAMED,    /* `independent:` */
    RIGMAT_INDEPENDENT_GIVEN,    /* the operating point's loop coordinates, as many as the DOF */
    RIGMAT_INDEPENDENT_PARTITION /* coordinate partitioning at the operating point */
} rigmat_independent_how;

/* Where a spring or damper acts. */
typedef enum rigmat_attach {
    RIGMAT_ATTACH_ACROSS,  /* across a joint: relative motion of parent and child */
    RIGMAT_ATTACH_BETWEEN, /* rotational, angle(B) - angle(A) */
    RIGMAT_ATTACH_POINTS   /* point to point along the connecting line */
} rigmat_attach;

/* A spring (stiffness, rest) or a damper (coefficient). */
typedef struct rigmat_link {
    char *name;
    rigmat_loc loc;
    rigmat_attach attach;
    size_t joint;          /* ACROSS */
    size_t body_a, body_b; /* BETWEEN and POINTS */
    double point_a_m[2], point_b_m[2]; /* POINTS, in each body's frame */
    double stiffness;      /* springs: N/m or N*m/rad */
    double rest;           /* springs: m or rad */
    double coefficient;    /* dampers: N*s/m or N*m*s/rad */
} rigmat_link;

typedef enum rigmat_motor_drive {
    RIGMAT_DRIVE_VOLTAGE = 0, RIGMAT_DRIVE_CURRENT, RIGMAT_DRIVE_DUTY
} rigmat_motor_drive;

/* A brushed DC motor with its transmission.  The loader resolves the
 * datasheet form into the circuit values below, all at the motor shaft. */
typedef struct rigmat_motor {
    char *name;
    rigmat_loc loc;
    char *part;                   /* catalog part name, or NULL */
    double resistance_ohm;        /* > 0 */
    double inductance_h;          /* > 0 unless inductance_neglected */
    int inductance_neglected;
    double torque_constant_nm_a;  /* Kt, motor shaft */
    double back_emf_v_s_rad;      /* Ke, motor shaft */
    double rotor_inertia_kgm2;    /* one motor, >= 0 */
    double friction_nm_s_rad;     /* viscous, motor shaft, >= 0 */
    /* datasheet form, kept for the report (valid when datasheet != 0) */
    int datasheet;
    int figures_at_output;
    double rated_voltage_v, stall_torque_nm, stall_current_a;
    double no_load_speed_rad_s, no_load_current_a;
    double kt_from_sheet, ke_from_sheet; /* both derived; torque_constant_nm_a is the one used */
    /* drive */
    rigmat_motor_drive drive;
    double supply_v;              /* duty drive */
    /* transmission */
    double gear_ratio;            /* N, motor turns per output turn, > 0 */
    double efficiency;            /* (0, 1], on Kt i only */
    double radius_m;              /* across a slider: pulley/pinion radius, or 0 */
    double lead_m;                /* across a slider: screw lead per turn, or 0 */
    double load_inertia_kgm2;     /* on the output shaft */
    /* placement: across a joint, or stator/rotor bodies */
    size_t joint;                 /* RIGMAT_NONE for the stator/rotor form */
    int mounted_on_child;         /* across: stator on the child */
    size_t stator, rotor;         /* bodies (filled for both forms when rotary) */
    unsigned count;               /* identical motors in parallel, >= 1 */
    int polarity;                 /* +1 or -1 */
    /* limits (README.md, "Limits" */
    int has_limit;                /* always 1 for a duty drive */
    double limit[2];              /* [low, high] of the drive input (V, A or duty) */
    double current_limit_a;       /* winding current per motor the drive allows; 0 = none */
} rigmat_motor;

typedef enum rigmat_force_kind {
    RIGMAT_FORCE_POINT,  /* on a body at a point, along a direction */
    RIGMAT_FORCE_TORQUE, /* torque_on a body (optionally reacting on another) */
    RIGMAT_FORCE_ACROSS  /* a generalized force across a joint */
} rigmat_force_kind;

typedef struct rigmat_force {
    char *name;
    rigmat_loc loc;
    rigmat_force_kind kind;
    size_t body;          /* POINT, TORQUE */
    double at_m[2];       /* POINT: in the body frame */
    double direction[2];  /* POINT: unit vector */
    int frame_body;       /* POINT: direction in the body frame (else world) */
    size_t reacting;      /* TORQUE: reaction body, or RIGMAT_NONE */
    size_t joint;         /* ACROSS */
    rigmat_role role;
    double density;       /* N/sqrt(Hz) or N*m/sqrt(Hz); 0 = none */
    double bandwidth_hz;  /* 0 = white */
    int has_limit;        /* `limit` given */
    double limit[2];      /* [low, high], N or N*m */
} rigmat_force;

typedef enum rigmat_sensor_kind {
    RIGMAT_SENSE_JOINT_POSITION, RIGMAT_SENSE_JOINT_VELOCITY,
    RIGMAT_SENSE_ANGLE, RIGMAT_SENSE_RATE,
    RIGMAT_SENSE_RELATIVE_ANGLE, RIGMAT_SENSE_RELATIVE_RATE,
    RIGMAT_SENSE_MOTOR_ANGLE,
    RIGMAT_SENSE_POINT_POSITION, RIGMAT_SENSE_POINT_VELOCITY,
    RIGMAT_SENSE_SPECIFIC_FORCE,
    RIGMAT_SENSE_CURRENT, RIGMAT_SENSE_DRIVE_FORCE,
    RIGMAT_SENSE_KIND_COUNT /* the number of kinds, not a kind (table: src/model/kinds.c) */
} rigmat_sensor_kind;

/* y = gain * (measured quantity) + offset.  noise, density and resolution
 * are in the measured quantity's own unit (before gain). */
typedef struct rigmat_sensor {
    char *name;
    rigmat_loc loc;
    rigmat_sensor_kind kind;
    size_t joint;          /* joint kinds, DRIVE_FORCE */
    size_t body, body_b;   /* body kinds; relative: reads body_b minus body */
    size_t motor;          /* MOTOR_ANGLE, CURRENT */
    double at_m[2];        /* point kinds, in the body frame */
    double axis[2];        /* point kinds: world unit vector; SPECIFIC_FORCE: body unit vector */
    double gain, offset;   /* gain signed, default 1 */
    double noise;          /* standard deviation per sample; 0 = none */
    double density;        /* per sqrt(Hz); 0 = none */
    double bandwidth_hz;   /* first-order bandwidth for density; 0 = sample average */
    double resolution;     /* quantization step; 0 = none */
    double counts_per_rev; /* angle readings (angle, relative_angle, a hinge's position,
                              motor_angle): decoded counts per turn; 0 = none */
    int unit_counts;       /* those readings: output in counts (else rad) */
    /* bias state `<sensor>.bias` (measured unit, before gain): b' = -b/tau + w */
    double bias_walk;      /* random walk: density of w (unit per sqrt(s)); 0 = none */
    double bias_sd;        /* Gauss-Markov: steady standard deviation; 0 = none */
    double bias_tau_s;     /* Gauss-Markov: correlation time; 0 = random walk */
    double filter_hz;      /* first-order low-pass state `<sensor>.filtered`; 0 = none */
} rigmat_sensor;

/* A sensor's bias state exists (and with it its noise input). */
#define RIGMAT_SENSOR_HAS_BIAS(se) ((se)->bias_walk > 0.0 || (se)->bias_sd > 0.0)

/* A name = value pair of the operating point. */
typedef struct rigmat_setting {
    char *name;
    rigmat_loc loc;
    double value; /* SI */
} rigmat_setting;

typedef struct rigmat_namelist {
    char **names;
    rigmat_loc *locs;
    size_t count;
} rigmat_namelist;

/* What a state, input or output is. */
typedef enum rigmat_signal_kind {
    RIGMAT_SIG_COORD,      /* state: a joint coordinate; index = joint */
    RIGMAT_SIG_RATE,       /* state: a joint rate; index = joint */
    RIGMAT_SIG_CURRENT,    /* state: a motor current; index = motor */
    RIGMAT_SIG_SHAPING,    /* state: a coloured disturbance's filter; index = input it colours */
    RIGMAT_SIG_DELAY,      /* state: a delayed input (discretize); index = input */
    RIGMAT_SIG_MOTOR,      /* input: a motor's drive; index = motor */
    RIGMAT_SIG_FORCE,      /* input: a force or torque; index = force */
    RIGMAT_SIG_DRIVEN,     /* input: a driven joint's derivative; index = joint */
    RIGMAT_SIG_SENSOR,     /* output: index = sensor */
    RIGMAT_SIG_BIAS,       /* state: a sensor's bias; index = sensor */
    RIGMAT_SIG_BIAS_NOISE, /* input (disturbance): the white noise driving a bias; index = sensor */
    RIGMAT_SIG_FILTERED,   /* state: a sensor's low-pass output; index = sensor */
    RIGMAT_SIG_FILTER_NOISE /* input (disturbance): a filtered sensor's density; index = sensor */
} rigmat_signal_kind;

typedef struct rigmat_signal {
    char *name;          /* "tilt.angle", "drive", "gyro" */
    char unit[24];       /* "rad", "m/s", "V", "1" ... */
    rigmat_signal_kind kind;
    size_t index;
    rigmat_role role;    /* inputs */
    /* inputs: the limits of the model entry (README.md, "Limits" */
    int has_limit;
    double limit[2];     /* [low, high] in the input's SI unit */
    double current_limit; /* motor inputs: A per motor; 0 = none */
} rigmat_signal;

/* The vectors of the state-space model, in their final order. */
typedef struct rigmat_layout {
    rigmat_signal *states, *inputs, *outputs;
    size_t nx, nu, ny;
    size_t nu_control;   /* inputs [0, nu_control) are control, the rest disturbances */
    char order_hash[17]; /* 16 hex digits of FNV-1a 64 over names and units */
} rigmat_layout;

struct rigmat_model { /* opaque in include/rigmat.h */
    char *file;          /* the path it was loaded from */
    char *name;
    double gravity_m_s2; /* default 9.80665 */
    double slope_rad;    /* the ground rises toward +x by this angle */
    rigmat_body *bodies;     size_t nbodies;   /* bodies[0] is ground */
    rigmat_joint *joints;    size_t njoints;
    rigmat_link *springs;    size_t nsprings;
    rigmat_link *dampers;    size_t ndampers;
    rigmat_motor *motors;    size_t nmotors;
    rigmat_force *forces;    size_t nforces;
    rigmat_sensor *sensors;  size_t nsensors;
    rigmat_closure *closures; size_t nclosures;
    rigmat_namelist independent;      /* `independent:` as written; empty = not given */
    rigmat_independent_how independent_how;
    int closures_pending;  /* closures not yet assembled: rigmat_model_check_equations does it */
    double closure_sv_ratio; /* at the operating point: the smallest singular value of the
                                constraint Jacobian's dependent block over its largest */
    double closure_residual; /* the largest closure residual after assembly (m or rad) */
    int closure_iterations;  /* Newton iterations of the assembly */
    rigmat_setting *op_coordinates; size_t nop_coordinates;
    rigmat_setting *op_rates;       size_t nop_rates;
    rigmat_setting *op_inputs;      size_t nop_inputs;
    rigmat_namelist op_solve;
    int order_interleaved;
    rigmat_namelist order_states, order_inputs, order_outputs; /* empty = default */
    rigmat_layout layout;
    rigmat_diags *owner_diags; /* interned file names live here; owned */
};

/* Load and validate a model file (the model stage: it does not build the
 * equations of motion; call rigmat_model_check_equations next).  sets are "PATH=VALUE" overrides (may be
 * NULL when nsets is 0).  Diagnostics go to diags (caller-owned, initialised).
 * On success *out is a new model owned by the caller (free it with
 * rigmat_model_free); on RIGMAT_EMODEL diags holds at least one error and
 * *out is NULL.  RIGMAT_EIO when the file cannot be read. */
rigmat_status rigmat_model_load(const char *path, const char *const *sets, size_t nsets,
        const rigmat_options *opt, rigmat_model **out, rigmat_diags *diags);
/* rigmat_model_free is declared in include/rigmat.h. */

/* Find by name; RIGMAT_NONE when absent. */
size_t rigmat_model_body(const rigmat_model *m, const char *name);
size_t rigmat_model_joint(const rigmat_model *m, const char *name);
size_t rigmat_model_motor(const rigmat_model *m, const char *name);

/* -------------------------------------------------------------- lti model */

/* A continuous linear model x' = A x + B u + f0, y = C x + D u around an
 * operating point, with what the noise model needs.  Inputs [0, nu_control)
 * are control inputs, the rest disturbances.  Built by rigmat_linearize
 * (src/mech/linearize.h); consumed by discretize and noise. */
typedef struct rigmat_lti {
    size_t nx, nu, ny, nu_control;
    gsl_matrix *A, *B, *C, *D; /* nx x nx, nx x nu, ny x nx, ny x nu; NULL when a size is 0 */
    gsl_vector *x0, *u0, *y0;  /* the operating point: state, input, output */
    gsl_vector *f0;            /* f(x0, u0): zero at a steady state */
    double residual;           /* max |f0| over the equations trim holds to zero */
    int is_steady;             /* residual below the trim tolerance */
    /* noise, per input: white-noise intensity Qc = density^2 (SI, per Hz);
     * 0 for control inputs and for disturbances without a density */
    double *input_intensity;   /* length nu */
    /* per input: a motor input's winding current (A, per motor) at the
     * operating point; 0 for the other inputs (README.md, "Limits" */
    double *input_current;     /* length nu */
    /* noise, per output, already scaled by |gain| into the output's unit */
    double *output_noise_sd;   /* standard deviation per sample; 0 = none */
    double *output_density;    /* per sqrt(Hz); 0 = none */
    double *output_bandwidth_hz; /* first-order bandwidth of the density; 0 = sample average */
    double *output_resolution; /* quantization step; 0 = none */
    /* names and units of x, u and y: plain copies owned by the lti (filled
     * by rigmat_linearize; NULL when a group is unnamed).  The sampling
     * stage reads name, unit and, for states, kind as a tag
     * (RIGMAT_SIG_CURRENT: a motor current, for the inductance advice);
     * index refers to the model the lti came from and is not used there. */
    rigmat_signal *states, *inputs, *outputs;
} rigmat_lti;

/* Allocate an lti of the given sizes with every matrix zeroed (no names);
 * free with rigmat_lti_free.  NULL when out of memory. */
rigmat_lti *rigmat_lti_alloc(size_t nx, size_t nu, size_t ny, size_t nu_control);
/* Copy names, units, kinds, indices and roles of the states (nx), inputs
 * (nu) and outputs (ny) into s, replacing those it had; any group may be
 * NULL (left unnamed).  RIGMAT_ENOMEM (s then has no names). */
rigmat_status rigmat_lti_set_signals(rigmat_lti *s, const rigmat_signal *states,
        const rigmat_signal *inputs, const rigmat_signal *outputs);
void rigmat_lti_free(rigmat_lti *s);

/* ------------------------------------------- layout, equations, linearize */
/* (src/model/layout.h, src/mech/mechanics.h, src/mech/linearize.h, src/mech/trim.h) */

/* Fill m->layout from the model: names, units, kinds and order of x, u and
 * y (README.md, "Rules worth knowing"), after the optional states/inputs/outputs lists
 * and `order: interleaved`, and the order hash.  rigmat_model_load calls
 * it; it never builds the equations of motion (a `states` list may leave
 * out only coordinates; whether they are cyclic is
 * rigmat_model_check_equations' job).  Problems go to d with the place of
 * the offending entry; returns RIGMAT_EMODEL after recording at least one
 * error, RIGMAT_ENOMEM.  The layout is owned by the model: release it with
 * rigmat_layout_release. */
rigmat_status rigmat_layout_build(rigmat_model *m, rigmat_diags *d);
void rigmat_layout_release(rigmat_layout *l);

/* The checks of a loaded model that need its equations of motion (the
 * mech stage; loading never builds them): the equations can be built
 * (driven joints give every derivative the model needs: the message names
 * the element and the driven kind that works), and every coordinate a
 * `states` list leaves out is cyclic (appears in no equation).  Call it
 * after rigmat_model_load and before using the model; rigmat_system_alloc,
 * rigmat_linearize and rigmat_trim_model refuse such a model too, with the
 * first problem as a rigmat_error.  Problems go to d (may be NULL) as
 * errors with places; returns RIGMAT_EMODEL after recording at least one,
 * RIGMAT_ENOMEM.  A model with closures is completed here: the loop is
 * assembled at the operating point, the independent coordinates are
 * chosen (m->independent_how, each joint's `dependent`) and the layout is
 * rebuilt without the dependent coordinates; until then the equations
 * refuse the model (RIGMAT_EUSAGE).  RIGMAT_ENUMERIC (with an error in d)
 * when a closure cannot assemble or sits at a dead centre. */
rigmat_status rigmat_model_check_equations(rigmat_model *m, rigmat_diags *d);

/* The nonlinear model x' = f(x, u), y = h(x, u) in the order of m->layout
 * (built), for extended Kalman filters and one's own simulators.  A system
 * holds scratch memory that every call rewrites: one thread at a time per
 * system (see THREAD SAFETY above); systems of the same model may run on
 * different threads at once.  States
 * a `states` list leaves out (cyclic coordinates) are held at their
 * operating-point values.  Returns a new object owned by the caller
 * (rigmat_system_free); it borrows m, which must outlive it.
 * RIGMAT_EMODEL when the equations cannot be built (a driven joint gives
 * too low a derivative: the message names the element) or the layout
 * leaves out a coordinate that is not cyclic. */
typedef struct rigmat_system rigmat_system;
rigmat_status rigmat_system_alloc(const rigmat_model *m, rigmat_system **out, rigmat_error *err);
void rigmat_system_free(rigmat_system *s);
/* f and h at (x, u), arrays of length nx, nu (in), nx and ny (out; either
 * may be NULL).  RIGMAT_ENUMERIC for a singular mass matrix (naming the
 * coordinate without inertia) or a point spring of zero length. */
rigmat_status rigmat_system_eval(rigmat_system *s, const double *x, const double *u, double *xdot,
        double *y, rigmat_error *err);
/* Every joint's coordinate at (x, u), in joint order (q has m->njoints
 * entries; 0 for a fixed joint): the states' values, a position-driven
 * joint's input and, in a closed loop, the dependent coordinates the
 * assembly solves (README.md, "Closed loops"). */
rigmat_status rigmat_system_coordinates(rigmat_system *s, const double *x, const double *u,
        double *q, rigmat_error *err);
/* The exact Jacobians df/dx, df/du, dh/dx, dh/du at (x, u) by the complex
 * step; matrices of the layout's sizes, any may be NULL. */
rigmat_status rigmat_system_jacobians(rigmat_system *s, const double *x, const double *u,
        gsl_matrix *A, gsl_matrix *B, gsl_matrix *C, gsl_matrix *D, rigmat_error *err);

/* The continuous linear model at the model's operating point, after trim
 * when operating_point.solve names unknowns.  *out is a new lti owned by the
 * caller (rigmat_lti_free), named after m's layout (copies).  warnings (may be
 * NULL) receives warnings: a steady motion along a coordinate that is not
 * cyclic makes the model time-varying.  RIGMAT_ENUMERIC when the trim does
 * not converge or a result is not finite; RIGMAT_EMODEL as for the system. */
rigmat_status rigmat_linearize(const rigmat_model *m, const rigmat_options *opt, rigmat_lti **out,
        rigmat_diags *warnings, rigmat_error *err);

/* The limits at an operating point (README.md, "Limits": u (layout
 * order, nu inputs described by inputs) within each input's limit and each
 * motor input's winding current cur (A per motor, 0 for other inputs) within
 * its current_limit.  RIGMAT_ENUMERIC with a message naming the input, the
 * value it needs and the limit, and a hint; RIGMAT_OK when all hold. */
rigmat_status rigmat_limits_check(const rigmat_model *m, const rigmat_signal *inputs, size_t nu,
        const double *u, const double *cur, rigmat_error *err);

/* Trim: a steady state over the names in operating_point.solve, by
 * Gauss-Newton with the exact Jacobian and an SVD step (src/mech/trim.h). */
typedef struct rigmat_trim_result {
    size_t nx, nu;
    double *x, *u;          /* the point found (or the last iterate), layout order */
    double residual;        /* max |f| over the balance equations */
    size_t iterations;
    int converged;          /* residual <= opt->trim_tol */
    char **free_unknowns;   /* unknowns the equations do not fix */
    size_t nfree;
    char **unmet_equations; /* equations that cannot be met when the others are
                             * ("d(elbow.rate)/dt"; src/mech/trim.h says how) */
    size_t nunmet;
    /* the residual per equation at x, u (the last iterate when not converged),
     * in the order trim holds them to zero: neq entries each */
    size_t neq;
    char **eq_state;        /* the state whose derivative the equation is */
    char **eq_unit;         /* the derivative's unit: "rad/s^2", "A/s" */
    double *eq_residual;    /* f of that state, in eq_unit */
} rigmat_trim_result;
/* Fill r (caller-owned struct, released with rigmat_trim_result_release
 * whatever the status).  RIGMAT_ENUMERIC when it does not converge (r then
 * holds the last iterate and its residual), RIGMAT_EMODEL for a name in
 * solve that matches nothing. */
rigmat_status rigmat_trim_model(const rigmat_model *m, const rigmat_options *opt,
        rigmat_trim_result *r, rigmat_error *err);
void rigmat_trim_result_release(rigmat_trim_result *r);

#endif /* RIGMAT_INTERNAL_H */
