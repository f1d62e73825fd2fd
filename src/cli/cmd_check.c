/* cmd_check.c - `rigmat check FILE`: validate a model and summarize what
 * it contains: bodies (mass, inertia and centre of mass, derived from the
 * shape where one is given), joints and how each body's angle and position
 * follow from their coordinates, the state, input and output vectors with
 * units and the order hash, motor values derived from datasheet figures,
 * the standard deviation per sample of every noise source at --rate, and
 * the operating point.  Text or JSON (the same content).
 *
 * Noise per sample (README.md, "Noise convention"): a density N
 * averaged over a sample T has sd N/sqrt(T); through a first-order
 * bandwidth f_c its variance is N^2 pi f_c; `noise` is already per
 * sample; a quantization step q adds q^2/12 (uniform rounding error,
 * common practice); the terms add in quadrature.
 */
#include "cli.h"
#include "units.h"
#include "kinds.h"
#include "noise.h"
#include "closure.h"

#include <math.h>
#include <gsl/gsl_math.h>
#include <string.h>

#ifndef M_PI
#define M_PI 3.14159265358979323846
#endif

static const char *const check_usage[] = {
    "rigmat check FILE [--rate FREQ] [--set PATH=VALUE] [--format text|json] [-o FILE] "
    "[--catalog DIR]", NULL };

/* sd per sample of a density (with optional bandwidth), by the noise
 * module's formulas (src/sample/noise.h); -1 when it needs a rate not given. */
static double density_sd(double density, double bandwidth_hz, double rate_hz)
{
    if (density > 0.0 && bandwidth_hz <= 0.0 && rate_hz <= 0.0)
        return -1.0;
    return sqrt(rigmat_noise_sensor(0.0, density, bandwidth_hz, 0.0,
            rate_hz > 0.0 ? 1.0 / rate_hz : 1.0).total_var);
}

/* The quantization step in the measured unit, by the kind's noise rule
 * (an encoder without a stated resolution is quantized to one count), the
 * rule the linearization uses for Rd too. */
static double sensor_resolution(const rigmat_sensor *s)
{
    double scale, resolution;
    rigmat_sensor_noise_rule(s, &scale, &resolution);
    return resolution;
}

/* The sd per sample of a sensor in its measured unit; -1 needs a rate.
 * Behind a `filter` the density is process noise of the filter state, not
 * noise per sample. */
static double sensor_sd(const rigmat_sensor *s, double rate_hz)
{
    const double density = s->filter_hz > 0.0 ? 0.0 : s->density;

    if (density > 0.0 && s->bandwidth_hz <= 0.0 && rate_hz <= 0.0)
        return -1.0;
    return sqrt(rigmat_noise_sensor(s->noise, density, s->bandwidth_hz, sensor_resolution(s),
            rate_hz > 0.0 ? 1.0 / rate_hz : 1.0).total_var);
}

static void body_text(FILE *f, const rigmat_body *b)
{
    const rigmat_shape_desc *sd = rigmat_shape_kind_desc(b->shape);
    char shape[160];

    fprintf(f, "  %-12s mass %.6g kg, inertia %.6g kg*m^2", b->name, b->mass_kg,
            b->inertia_kgm2);
    shape[0] = '\0';
    if (sd->describe != NULL)
        sd->describe(b, shape, sizeof shape);
    fputs(shape, f);
    fprintf(f, ", centre of mass [%.6g, %.6g] m\n", b->com_m[0], b->com_m[1]);
}

/* "chassis angle = wheel angle + tilt" and the like, by the joint's type. */
static void joint_relations(const rigmat_model *m, const rigmat_joint *j, char *angle,
        size_t alen, char *place, size_t plen)
{
    rigmat_joint_kind(j->type)->relations(m, j, angle, alen, place, plen);
}

static double kt_ke_mismatch(const rigmat_motor *mo)
{
    const double big = fmax(mo->kt_from_sheet, mo->ke_from_sheet);
    return big > 0.0 ? fabs(mo->kt_from_sheet - mo->ke_from_sheet) / big : 0.0;
}

static void signals_text(FILE *f, const rigmat_signal *s, size_t from, size_t to)
{
    size_t i;
    for (i = from; i < to; i++)
        fprintf(f, "  %2zu  %-24s %s\n", i + 1, s[i].name, s[i].unit);
    if (from == to)
        fputs("  (none)\n", f);
}

static void settings_text(FILE *f, const char *title, const rigmat_setting *s, size_t n)
{
    size_t i;
    fprintf(f, "  %s:", title);
    for (i = 0; i < n; i++)
        fprintf(f, "%s %s = %.6g", i ? "," : "", s[i].name, s[i].value);
    fputs(n ? " (SI)\n" : " none\n", f);
}

/* Text of a piece of the layout written by one of the helpers above into
 * a memory stream, attached to the node just added. */
struct capture {
    char *buf;
    size_t len;
    FILE *f;
};

static FILE *capture_open(struct capture *c, rigmat_result *r)
{
    c->buf = NULL;
    c->len = 0;
    c->f = open_memstream(&c->buf, &c->len);
    if (c->f == NULL)
        r->status = RIGMAT_ENOMEM;
    return c->f;
}

/* As the text of the node just added (as_text), or as a text line. */
static void capture_close(struct capture *c, rigmat_result *r, int as_node_text)
{
    if (c->f == NULL)
        return;
    if (fclose(c->f) != 0)
        r->status = RIGMAT_ENOMEM;
    if (as_node_text)
        rigmat_result_as_text(r, "%s", c->buf != NULL ? c->buf : "");
    else
        rigmat_result_text(r, "%s", c->buf != NULL ? c->buf : "");
    free(c->buf);
    c->f = NULL;
}

static void vec2(rigmat_result *r, const char *key, const double v[2])
{
    rigmat_result_key(r, key);
    rigmat_result_array(r);
    rigmat_result_number(r, v[0], "m");
    rigmat_result_number(r, v[1], "m");
    rigmat_result_close(r);
}

static void settings(rigmat_result *r, const char *key, const rigmat_setting *s, size_t n)
{
    size_t i;

    rigmat_result_key(r, key);
    rigmat_result_object(r);
    for (i = 0; i < n; i++) {
        rigmat_result_key(r, s[i].name);
        rigmat_result_number(r, s[i].value, NULL);
    }
    rigmat_result_close(r);
}

/* One entry of "noise": its JSON record and its line of text. */
static void noise_entry(rigmat_result *r, const char *name, const char *kind, double sd,
        const char *unit)
{
    rigmat_result_object(r);
    rigmat_result_key(r, "name");
    rigmat_result_string(r, name);
    rigmat_result_key(r, "kind");
    rigmat_result_string(r, kind);
    rigmat_result_key(r, "sd_per_sample");
    if (sd < 0.0)
        rigmat_result_null(r);
    else
        rigmat_result_number(r, sd, unit);
    rigmat_result_key(r, "unit");
    rigmat_result_string(r, unit);
    rigmat_result_close(r);
}

/* "biases": each sensor bias's standard deviation one sample (with --rate)
 * and one minute after it was known exactly, in the measured unit. */
static void bias_entries(rigmat_result *r, const rigmat_model *m, double rate_hz)
{
    size_t i;
    int any = 0;

    rigmat_result_key(r, "biases");
    rigmat_result_array(r);
    for (i = 0; i < m->nsensors; i++) {
        const rigmat_sensor *s = &m->sensors[i];
        const char *u = rigmat_sensor_measured_unit(m, s);
        const double minute = rigmat_noise_bias_sd(s->bias_walk, s->bias_sd, s->bias_tau_s,
                60.0);
        if (!RIGMAT_SENSOR_HAS_BIAS(s))
            continue;
        const char *head = any ? "" : "sensor biases (sd from a known start)\n";
        any = 1;
        rigmat_result_object(r);
        rigmat_result_key(r, "name");
        rigmat_result_string(r, s->name);
        rigmat_result_key(r, "model");
        rigmat_result_string(r, s->bias_tau_s > 0.0 ? "gauss_markov" : "random_walk");
        rigmat_result_key(r, "sd_after_sample");
        if (rate_hz > 0.0) {
            const double one = rigmat_noise_bias_sd(s->bias_walk, s->bias_sd, s->bias_tau_s,
                    1.0 / rate_hz);
            rigmat_result_number(r, one, u);
            rigmat_result_as_text(r, "%s  %-12s %s, sd %.6g %s after one sample, ", head, s->name,
                    s->bias_tau_s > 0.0 ? "Gauss-Markov" : "random walk", one, u);
        } else {
            rigmat_result_null(r);
            rigmat_result_as_text(r, "%s  %-12s %s, (give --rate for one sample), ", head, s->name,
                    s->bias_tau_s > 0.0 ? "Gauss-Markov" : "random walk");
        }
        rigmat_result_key(r, "sd_after_minute");
        rigmat_result_number(r, minute, u);
        rigmat_result_as_text(r, "%.6g %s after one minute\n", minute, u);
        rigmat_result_key(r, "unit");
        rigmat_result_string(r, u);
        rigmat_result_close(r);
    }
    rigmat_result_close(r);
}

static void body_entry(rigmat_result *r, const rigmat_body *b)
{
    struct capture c;

    rigmat_result_object(r);
    rigmat_result_key(r, "name");
    rigmat_result_string(r, b->name);
    rigmat_result_key(r, "mass");
    rigmat_result_number(r, b->mass_kg, "kg");
    rigmat_result_key(r, "inertia");
    rigmat_result_number(r, b->inertia_kgm2, "kg*m^2");
    vec2(r, "com", b->com_m);
    rigmat_result_key(r, "shape");
    rigmat_result_string(r, rigmat_shape_kind_desc(b->shape)->word);
    rigmat_result_close(r);
    if (capture_open(&c, r) != NULL)
        body_text(c.f, b);
    capture_close(&c, r, 1);
}

static void joint_entry(rigmat_result *r, const rigmat_model *m, const rigmat_joint *j)
{
    const rigmat_joint_desc *jd = rigmat_joint_kind(j->type);
    char angle[256], place[256], coord[160], unit[40];

    coord[0] = '\0';
    snprintf(unit, sizeof unit, " [%s]", jd->has_coordinate ? rigmat_joint_unit(j, 0) : "");
    joint_relations(m, j, angle, sizeof angle, place, sizeof place);
    rigmat_result_object(r);
    rigmat_result_key(r, "name");
    rigmat_result_string(r, j->name);
    rigmat_result_key(r, "type");
    rigmat_result_string(r, rigmat_joint_kind(j->type)->word);
    rigmat_result_key(r, "parent");
    rigmat_result_string(r, m->bodies[j->parent].name);
    rigmat_result_key(r, "child");
    rigmat_result_string(r, m->bodies[j->child].name);
    rigmat_result_key(r, "coordinate");
    if (!jd->has_coordinate) {
        rigmat_result_null(r);
    } else {
        snprintf(coord, sizeof coord, "%s%s", j->name, jd->suffix[0]);
        rigmat_result_string(r, coord);
    }
    rigmat_result_key(r, "angle_relation");
    rigmat_result_string(r, angle);
    rigmat_result_key(r, "position_relation");
    rigmat_result_string(r, place);
    rigmat_result_close(r);
    rigmat_result_as_text(r, "  %-12s %s, %s -> %s%s%s%s%s%s%s%s\n      %s\n      %s\n", j->name,
            rigmat_joint_kind(j->type)->word, m->bodies[j->parent].name, m->bodies[j->child].name,
            jd->has_coordinate ? ", coordinate " : "", jd->has_coordinate ? coord : "",
            jd->has_coordinate ? unit : "",
            j->driven != RIGMAT_DRIVEN_NONE ? ", driven by " : "",
            j->driven == RIGMAT_DRIVEN_NONE ? ""
            : j->driven == RIGMAT_DRIVEN_POSITION ? "position"
            : j->driven == RIGMAT_DRIVEN_VELOCITY ? "velocity" : "acceleration",
            j->driven == RIGMAT_DRIVEN_NONE ? ""
            : j->role == RIGMAT_ROLE_DISTURBANCE ? " (disturbance)" : " (input)",
            "", angle, place);
}

static void motor_entry(rigmat_result *r, const rigmat_motor *mo)
{
    struct capture c;
    FILE *f;

    rigmat_result_object(r);
    rigmat_result_key(r, "name");
    rigmat_result_string(r, mo->name);
    rigmat_result_key(r, "form");
    rigmat_result_string(r, mo->datasheet ? "datasheet" : "circuit");
    rigmat_result_key(r, "resistance");
    rigmat_result_number(r, mo->resistance_ohm, "ohm");
    rigmat_result_key(r, "inductance");
    if (mo->inductance_neglected)
        rigmat_result_null(r);
    else
        rigmat_result_number(r, mo->inductance_h, "H");
    rigmat_result_key(r, "torque_constant");
    rigmat_result_number(r, mo->torque_constant_nm_a, "N*m/A");
    rigmat_result_key(r, "back_emf_constant");
    rigmat_result_number(r, mo->back_emf_v_s_rad, "V*s/rad");
    rigmat_result_key(r, "rotor_inertia");
    rigmat_result_number(r, mo->rotor_inertia_kgm2, "kg*m^2");
    rigmat_result_key(r, "friction");
    rigmat_result_number(r, mo->friction_nm_s_rad, "N*m*s/rad");
    rigmat_result_key(r, "gear_ratio");
    rigmat_result_number(r, mo->gear_ratio, NULL);
    rigmat_result_key(r, "efficiency");
    rigmat_result_number(r, mo->efficiency, NULL);
    rigmat_result_key(r, "count");
    rigmat_result_integer(r, (long)mo->count);
    rigmat_result_key(r, "polarity");
    rigmat_result_integer(r, mo->polarity);
    rigmat_result_key(r, "drive");
    rigmat_result_string(r, rigmat_drive_kind_desc(mo->drive)->word);
    if (mo->datasheet) {
        rigmat_result_key(r, "kt_from_sheet");
        rigmat_result_number(r, mo->kt_from_sheet, "N*m/A");
        rigmat_result_key(r, "ke_from_sheet");
        rigmat_result_number(r, mo->ke_from_sheet, "V*s/rad");
        rigmat_result_key(r, "mismatch");
        rigmat_result_number(r, kt_ke_mismatch(mo), NULL);
    }
    rigmat_result_close(r);
    f = capture_open(&c, r);
    if (f == NULL)
        return;
    fprintf(f, "  %-12s %s form%s%s%s: R %.6g ohm, L ", mo->name,
            mo->datasheet ? "datasheet" : "circuit", mo->part ? " (part " : "",
            mo->part ? mo->part : "", mo->part ? ")" : "", mo->resistance_ohm);
    if (mo->inductance_neglected)
        fputs("neglected", f);
    else
        fprintf(f, "%.6g H", mo->inductance_h);
    fprintf(f, ", Kt %.6g N*m/A, Ke %.6g V*s/rad, rotor %.6g kg*m^2, friction %.6g "
            "N*m*s/rad\n", mo->torque_constant_nm_a, mo->back_emf_v_s_rad,
            mo->rotor_inertia_kgm2, mo->friction_nm_s_rad);
    fprintf(f, "      gear ratio %.6g, efficiency %.6g, count %u, polarity %+d, drive %s",
            mo->gear_ratio, mo->efficiency, mo->count, mo->polarity, rigmat_drive_kind_desc(mo->drive)->word);
    if (mo->drive == RIGMAT_DRIVE_DUTY)
        fprintf(f, " from %.6g V", mo->supply_v);
    if (mo->radius_m > 0.0)
        fprintf(f, ", radius %.6g m", mo->radius_m);
    if (mo->lead_m > 0.0)
        fprintf(f, ", lead %.6g m/rev", mo->lead_m);
    fputc('\n', f);
    if (mo->datasheet)
        fprintf(f, "      from the sheet (%s-shaft figures): Kt = T_stall/I_stall = %.6g "
                "N*m/A, Ke = (V - R I_nl)/w_nl = %.6g V*s/rad, mismatch %.1f%%; Kt is used "
                "for torque, Ke for the back-EMF\n", mo->figures_at_output ? "output" :
                "motor", mo->kt_from_sheet, mo->ke_from_sheet, 100.0 * kt_ke_mismatch(mo));
    capture_close(&c, r, 1);
}

static void check_headroom(struct cli_env *env, const rigmat_model *m, rigmat_result *r);

/* Why these coordinates are the independent ones (README.md, "Closed loops"). */
static const char *independent_why(rigmat_independent_how how)
{
    switch (how) {
    case RIGMAT_INDEPENDENT_NAMED: return "named in 'independent:'";
    case RIGMAT_INDEPENDENT_GIVEN:
        return "the loop coordinates given in operating_point.coordinates, as many as the "
               "degrees of freedom";
    case RIGMAT_INDEPENDENT_PARTITION:
        return "coordinate partitioning at the operating point: the dependent ones are the "
               "best-conditioned columns of the constraint Jacobian (column-pivoted QR)";
    default: return "no closed loop";
    }
}

static const char *independent_word(rigmat_independent_how how)
{
    return how == RIGMAT_INDEPENDENT_NAMED ? "named" :
           how == RIGMAT_INDEPENDENT_GIVEN ? "operating_point" : "partitioned";
}

/* The closed loops: closures, which coordinates are independent and why,
 * the assembled values and the distance from a dead centre. */
static void closures_entry(rigmat_result *r, const rigmat_model *m)
{
    struct capture c;
    size_t i, k;
    int pass;

    rigmat_result_key(r, "closures");
    rigmat_result_object(r);
    rigmat_result_key(r, "entries");
    rigmat_result_array(r);
    for (i = 0; i < m->nclosures; i++) {
        const rigmat_closure *cl = &m->closures[i];
        rigmat_result_object(r);
        rigmat_result_key(r, "name");
        rigmat_result_string(r, cl->name);
        rigmat_result_key(r, "type");
        rigmat_result_string(r, cl->type == RIGMAT_CLOSURE_SLIDER ? "slider" : "hinge");
        rigmat_result_key(r, "bodies");
        rigmat_result_array(r);
        rigmat_result_string(r, m->bodies[cl->body[0]].name);
        rigmat_result_string(r, m->bodies[cl->body[1]].name);
        rigmat_result_close(r);
        if (cl->type == RIGMAT_CLOSURE_SLIDER) {
            rigmat_result_key(r, "angle");
            rigmat_result_number(r, cl->angle_rad, "rad");
        }
        rigmat_result_close(r);
    }
    rigmat_result_close(r);
    for (pass = 0; pass < 2; pass++) {
        rigmat_result_key(r, pass ? "dependent" : "independent");
        rigmat_result_array(r);
        for (k = 0; k < m->njoints; k++)
            if (m->joints[k].in_loop && m->joints[k].dependent == pass)
                rigmat_result_string(r, m->joints[k].name);
        rigmat_result_close(r);
    }
    rigmat_result_key(r, "chosen_by");
    rigmat_result_string(r, independent_word(m->independent_how));
    rigmat_result_key(r, "assembled");
    rigmat_result_object(r);
    for (k = 0; k < m->njoints; k++)
        if (m->joints[k].in_loop) {
            rigmat_result_key(r, m->joints[k].name);
            rigmat_result_number(r, m->joints[k].assembled, NULL);
        }
    rigmat_result_close(r);
    rigmat_result_key(r, "residual");
    rigmat_result_number(r, m->closure_residual, NULL);
    rigmat_result_key(r, "iterations");
    rigmat_result_integer(r, (long)m->closure_iterations);
    rigmat_result_key(r, "singular_value_ratio");
    rigmat_result_number(r, m->closure_sv_ratio, NULL);
    rigmat_result_key(r, "dead_centre_below");
    rigmat_result_number(r, RIGMAT_CLOSURE_SV_RTOL, NULL);
    rigmat_result_close(r);
    if (capture_open(&c, r) == NULL)
        return;
    fputs("\nclosed loops (two equations per closure)\n", c.f);
    for (i = 0; i < m->nclosures; i++) {
        const rigmat_closure *cl = &m->closures[i];
        if (cl->type == RIGMAT_CLOSURE_SLIDER)
            fprintf(c.f, "  %-12s slider: point [%.6g, %.6g] m of %s on the line through "
                    "[%.6g, %.6g] m of %s along [%.6g, %.6g]; relative angle held at %.6g "
                    "deg\n", cl->name, cl->at_m[1][0], cl->at_m[1][1],
                    m->bodies[cl->body[1]].name, cl->at_m[0][0], cl->at_m[0][1],
                    m->bodies[cl->body[0]].name, cl->axis[0], cl->axis[1],
                    fabs(cl->angle_rad) < 1e-12 ? 0.0 : cl->angle_rad * 180.0 / M_PI);
        else
            fprintf(c.f, "  %-12s hinge: point [%.6g, %.6g] m of %s = point [%.6g, %.6g] m "
                    "of %s\n", cl->name, cl->at_m[0][0], cl->at_m[0][1],
                    m->bodies[cl->body[0]].name, cl->at_m[1][0], cl->at_m[1][1],
                    m->bodies[cl->body[1]].name);
    }
    for (pass = 0; pass < 2; pass++) {
        int first = 1;
        fputs(pass ? "  dependent:" : "  independent:", c.f);
        for (k = 0; k < m->njoints; k++)
            if (m->joints[k].in_loop && m->joints[k].dependent == pass) {
                fprintf(c.f, "%s %s", first ? "" : ",", m->joints[k].name);
                first = 0;
            }
        fprintf(c.f, pass ? " (solved by Newton assembly at every evaluation)\n" :
                " (%s)\n", independent_why(m->independent_how));
    }
    fputs("  assembled at the operating point:", c.f);
    for (k = 0, pass = 0; k < m->njoints; k++)
        if (m->joints[k].in_loop) {
            fprintf(c.f, "%s %s = %.9g", pass ? "," : "", m->joints[k].name,
                    m->joints[k].assembled);
            pass = 1;
        }
    fprintf(c.f, " (SI), residual %.3g after %d Newton iterations\n", m->closure_residual,
            m->closure_iterations);
    fprintf(c.f, "  distance from a dead centre: the dependent block of the constraint "
            "Jacobian has relative singular value %.3g (refused below %g)\n",
            m->closure_sv_ratio, RIGMAT_CLOSURE_SV_RTOL);
    capture_close(&c, r, 1);
}

/* The result of `check`, described once: the JSON records, each with its
 * line of the text layout. */
static void check_result(struct cli_env *env, rigmat_result *r, const rigmat_model *m,
        double rate_hz)
{
    const rigmat_layout *l = &m->layout;
    struct capture c;
    size_t i;

    rigmat_result_head(r, m->name, l->order_hash, l->states, l->nx, l->inputs, l->nu,
            l->outputs, l->ny);
    rigmat_result_key(r, "file");
    rigmat_result_string(r, m->file);
    rigmat_result_as_text(r, "model: %s (%s)\n", cli_model_name(m), m->file);
    rigmat_result_key(r, "gravity");
    rigmat_result_number(r, m->gravity_m_s2, "m/s^2");
    rigmat_result_as_text(r, "gravity %.6g m/s^2, slope %.6g deg\n", m->gravity_m_s2,
            m->slope_rad * 180.0 / M_PI);
    rigmat_result_key(r, "slope");
    rigmat_result_number(r, m->slope_rad, "rad");
    rigmat_result_show(r, RIGMAT_SHOW_JSON | RIGMAT_SHOW_EXPORT);
    rigmat_result_key(r, "nu_control");
    rigmat_result_integer(r, (long)l->nu_control);
    rigmat_result_show(r, RIGMAT_SHOW_JSON | RIGMAT_SHOW_EXPORT);
    rigmat_result_text(r, "\nbodies (inertia about the centre of mass; centre of mass in the "
            "body frame)\n  ground       the fixed world body\n");
    rigmat_result_key(r, "bodies");
    rigmat_result_array(r);
    for (i = 1; i < m->nbodies; i++)
        body_entry(r, &m->bodies[i]);
    rigmat_result_close(r);
    rigmat_result_text(r, "\njoints\n");
    rigmat_result_key(r, "joints");
    rigmat_result_array(r);
    for (i = 0; i < m->njoints; i++)
        joint_entry(r, m, &m->joints[i]);
    rigmat_result_close(r);
    if (m->nclosures > 0)
        closures_entry(r, m);
    /* the vectors of the head, laid out for people */
    if (capture_open(&c, r) != NULL) {
        fprintf(c.f, "\nstates (%zu), order hash %s\n", l->nx, l->order_hash);
        signals_text(c.f, l->states, 0, l->nx);
        fprintf(c.f, "\ninputs: control (%zu)\n", l->nu_control);
        signals_text(c.f, l->inputs, 0, l->nu_control);
        fprintf(c.f, "inputs: disturbance (%zu)\n", l->nu - l->nu_control);
        signals_text(c.f, l->inputs, l->nu_control, l->nu);
        fprintf(c.f, "\noutputs (%zu)\n", l->ny);
        signals_text(c.f, l->outputs, 0, l->ny);
        if (m->nmotors > 0)
            fputs("\nmotors (values at the motor shaft, one motor)\n", c.f);
    }
    capture_close(&c, r, 0);
    rigmat_result_key(r, "motors");
    rigmat_result_array(r);
    for (i = 0; i < m->nmotors; i++)
        motor_entry(r, &m->motors[i]);
    rigmat_result_close(r);
    rigmat_result_key(r, "rate");
    if (rate_hz > 0.0) {
        rigmat_result_number(r, rate_hz, "Hz");
        rigmat_result_as_text(r, "\nnoise per sample at %.6g Hz (T = %.6g s)\n", rate_hz,
                1.0 / rate_hz);
    } else {
        rigmat_result_null(r);
        rigmat_result_as_text(r, "\nnoise per sample (give --rate for white densities)\n");
    }
    rigmat_result_key(r, "noise");
    rigmat_result_array(r);
    for (i = 0; i < m->nsensors; i++) {
        const rigmat_sensor *s = &m->sensors[i];
        const double sd = sensor_sd(s, rate_hz);
        noise_entry(r, s->name, "sensor", sd < 0.0 ? sd : sd * fabs(s->gain), rigmat_sensor_measured_unit(m, s));
        if (s->noise == 0.0 && s->density == 0.0 && sensor_resolution(s) == 0.0)
            rigmat_result_as_text(r, "  %-12s sensor, noiseless\n", s->name);
        else if (sd < 0.0)
            rigmat_result_as_text(r, "  %-12s sensor, needs --rate\n", s->name);
        else
            rigmat_result_as_text(r, "  %-12s sensor, sd %.6g %s%s\n", s->name, sd * fabs(s->gain),
                    rigmat_sensor_measured_unit(m, s), s->gain != 1.0 ? " (times |gain|)" : "");
    }
    for (i = 0; i < m->nforces; i++) {
        const rigmat_force *fo = &m->forces[i];
        const double sd = density_sd(fo->density, fo->bandwidth_hz, rate_hz);
        const char *u = rigmat_units_kind_symbol(rigmat_force_effort(m, fo));
        if (fo->density <= 0.0)
            continue;
        noise_entry(r, fo->name, "disturbance", sd, u);
        if (sd < 0.0)
            rigmat_result_as_text(r, "  %-12s disturbance, needs --rate\n", fo->name);
        else
            rigmat_result_as_text(r, "  %-12s disturbance, sd %.6g %s\n", fo->name, sd, u);
    }
    rigmat_result_close(r);
    for (i = 0; i < m->njoints; i++) {
        const rigmat_joint *j = &m->joints[i];
        const double sd = density_sd(j->density, j->bandwidth_hz, rate_hz);
        if (j->driven == RIGMAT_DRIVEN_NONE || j->density <= 0.0)
            continue;
        if (sd < 0.0)
            rigmat_result_text(r, "  %-12s driven joint, needs --rate\n", j->name);
        else
            rigmat_result_text(r, "  %-12s driven joint, sd %.6g (SI)\n", j->name, sd);
    }
    bias_entries(r, m, rate_hz);
    rigmat_result_key(r, "operating_point");
    rigmat_result_object(r);
    settings(r, "coordinates", m->op_coordinates, m->nop_coordinates);
    settings(r, "rates", m->op_rates, m->nop_rates);
    settings(r, "inputs", m->op_inputs, m->nop_inputs);
    rigmat_result_key(r, "solve");
    rigmat_result_array(r);
    for (i = 0; i < m->op_solve.count; i++)
        rigmat_result_string(r, m->op_solve.names[i]);
    rigmat_result_close(r);
    rigmat_result_close(r);
    if (capture_open(&c, r) != NULL) {
        fputs("\noperating point\n", c.f);
        settings_text(c.f, "coordinates", m->op_coordinates, m->nop_coordinates);
        settings_text(c.f, "rates", m->op_rates, m->nop_rates);
        settings_text(c.f, "inputs", m->op_inputs, m->nop_inputs);
        fputs("  solve:", c.f);
        for (i = 0; i < m->op_solve.count; i++)
            fprintf(c.f, "%s %s", i ? "," : "", m->op_solve.names[i]);
        fputs(m->op_solve.count ? "\n" : " nothing\n", c.f);
    }
    capture_close(&c, r, 1);
    check_headroom(env, m, r);
    check_sign_table(env, m, r);
}

/* How much of its limit a value uses, in percent: of the bound on the
 * value's side of zero when that bound lies on that side, else of the
 * whole range from low. */
static double used_percent(double v, double lo, double hi)
{
    if (v >= 0.0 && hi > 0.0)
        return 100.0 * v / hi;
    if (v < 0.0 && lo < 0.0)
        return 100.0 * v / lo;
    return 100.0 * (v - lo) / (hi - lo);
}

/* One headroom entry: JSON object and its text line appended to buf. */
static void headroom_entry(rigmat_result *r, char *buf, size_t len, const char *name,
        const char *what, double v, double lo, double hi, const char *unit)
{
    const double used = used_percent(v, lo, hi);
    const double room = GSL_MIN_DBL(hi - v, v - lo);
    const size_t at = strlen(buf);
    const char *us = strcmp(unit, "1") == 0 ? "" : unit, *sp = us[0] ? " " : "";

    rigmat_result_object(r);
    rigmat_result_key(r, "input");
    rigmat_result_string(r, name);
    rigmat_result_key(r, "quantity");
    rigmat_result_string(r, what);
    rigmat_result_key(r, "value");
    rigmat_result_number(r, v, unit);
    rigmat_result_key(r, "limit");
    rigmat_result_array(r);
    rigmat_result_number(r, lo, unit);
    rigmat_result_number(r, hi, unit);
    rigmat_result_close(r);
    rigmat_result_key(r, "headroom");
    rigmat_result_number(r, room, unit);
    rigmat_result_key(r, "used_percent");
    rigmat_result_number(r, used, "%");
    rigmat_result_close(r);
    if (at < len)
        snprintf(buf + at, len - at, "  %-12s %-7s %.6g%s%s of [%.6g, %.6g]: %.1f %% used, "
                "headroom %.6g%s%s%s\n", name, what, v, sp, us, lo, hi, used, room, sp, us,
                room < 0.0 ? " (beyond the limit)" : "");
}

/* The headroom of every limited input and motor current at the operating
 * point (README.md, "Limits"), after trim when solve names
 * unknowns.  A point beyond a limit is shown here, not refused. */
static void check_headroom(struct cli_env *env, const rigmat_model *m, rigmat_result *r)
{
    const rigmat_layout *L = &m->layout;
    rigmat_options opt = env->opt;
    rigmat_lti *l = NULL;
    rigmat_error e;
    char buf[4096];
    size_t k;
    int any = 0;

    for (k = 0; k < L->nu; k++)
        any |= L->inputs[k].has_limit || L->inputs[k].current_limit > 0.0;
    if (!any)
        return;
    memset(&e, 0, sizeof e);
    rigmat_result_key(r, "headroom");
    opt.limits_refuse = 0;
    if (rigmat_linearize(m, &opt, &l, NULL, &e) != RIGMAT_OK) {
        rigmat_result_null(r);
        rigmat_result_as_text(r, "\nheadroom: not available: %s\n", e.message);
        return;
    }
    buf[0] = '\0';
    rigmat_result_array(r);
    for (k = 0; k < L->nu; k++) {
        const rigmat_signal *in = &L->inputs[k];
        const double u = gsl_vector_get(l->u0, k);
        if (in->has_limit)
            headroom_entry(r, buf, sizeof buf, in->name, "input", u, in->limit[0],
                    in->limit[1], in->unit);
        if (in->current_limit > 0.0)
            headroom_entry(r, buf, sizeof buf, in->name, "current", fabs(l->input_current[k]),
                    -in->current_limit, in->current_limit, "A");
    }
    rigmat_result_close(r);
    rigmat_result_as_text(r, "\nheadroom at the operating point\n%s", buf);
    rigmat_lti_free(l);
}

/* called from the table in main.c */
rigmat_status cmd_check(int argc, char **argv, struct cli_env *env);
rigmat_status cmd_check(int argc, char **argv, struct cli_env *env)
{
    struct cli_common c;
    const char *rate = NULL;
    const struct cli_opt opts[] = {
        { 0, "rate", CLI_OPT_STRING, &rate, "FREQ", "sample rate for the noise per sample" },
        CLI_COMMON_ROWS(&c), CLI_OPT_END_ROW };
    static const char *const formats[] = { "text", "json", NULL };
    rigmat_result *res = NULL;
    rigmat_model *m = NULL;
    rigmat_lti *lti = NULL;
    const char *file = NULL;
    int done = 0;
    double rate_hz = 0.0;
    rigmat_status st;
    int fmt;

    memset(&c, 0, sizeof c);
    st = cli_model_command(argc, argv, opts, check_usage, formats, env, &c, &file, &fmt, &done);
    if (st != RIGMAT_OK || done)
        return st;
    if (rate != NULL) {
        st = cli_quantity(env, "rate", rate, RIGMAT_Q_FREQUENCY, &rate_hz);
        if (st != RIGMAT_OK)
            return st;
        if (!(rate_hz > 0.0)) {
            fprintf(env->err, "rigmat check: --rate must be positive\n");
            return RIGMAT_EUSAGE;
        }
    }
    env->opt.rate_hz = rate_hz;
    env->opt.limits_refuse = 0; /* check shows a point beyond a limit (headroom), trim refuses it */
    st = cli_load_model(env, file, &c, &m);
    if (st != RIGMAT_OK)
        return st;
    /* check fails wherever linearize would: a model with no inertia on a
     * coordinate, or one that overflows, is no model to accept */
    st = cli_linearize(env, m, &lti);
    if (st != RIGMAT_OK) {
        rigmat_model_free(m);
        return st;
    }
    res = rigmat_result_alloc("check");
    if (res == NULL) {
        fprintf(env->err, "rigmat check: out of memory\n");
        st = RIGMAT_ENOMEM;
    } else {
        check_result(env, res, m, rate_hz);
        st = cli_emit(env, res, &c, file);
        /* the text ends with the one-line modes summary */
        if (st == RIGMAT_OK && (c.format == NULL || strcmp(c.format, "text") == 0))
            cli_modes_summary(env, m, lti);
    }
    rigmat_result_free(res);
    rigmat_lti_free(lti);
    rigmat_model_free(m);
    return st;
}
