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

#include <math.h>
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

/* The sd per sample of a sensor in its measured unit; -1 needs a rate. */
static double sensor_sd(const rigmat_sensor *s, double rate_hz)
{
    if (s->density > 0.0 && s->bandwidth_hz <= 0.0 && rate_hz <= 0.0)
        return -1.0;
    return sqrt(rigmat_noise_sensor(s->noise, s->density, s->bandwidth_hz, sensor_resolution(s),
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

static void check_text(FILE *f, const rigmat_model *m, double rate_hz)
{
    const rigmat_layout *l = &m->layout;
    size_t i;

    fprintf(f, "model: %s (%s)\n", cli_model_name(m), m->file);
    fprintf(f, "gravity %.6g m/s^2, slope %.6g deg\n", m->gravity_m_s2,
            m->slope_rad * 180.0 / M_PI);
    fputs("\nbodies (inertia about the centre of mass; centre of mass in the body frame)\n", f);
    fputs("  ground       the fixed world body\n", f);
    for (i = 1; i < m->nbodies; i++)
        body_text(f, &m->bodies[i]);
    fputs("\njoints\n", f);
    for (i = 0; i < m->njoints; i++) {
        const rigmat_joint *j = &m->joints[i];
        char angle[256], place[256];
        const rigmat_joint_desc *jd = rigmat_joint_kind(j->type);
        fprintf(f, "  %-12s %s, %s -> %s", j->name, jd->word, m->bodies[j->parent].name,
                m->bodies[j->child].name);
        if (jd->has_coordinate)
            fprintf(f, ", coordinate %s%s [%s]", j->name, jd->suffix[0],
                    rigmat_joint_unit(j, 0));
        if (j->driven != RIGMAT_DRIVEN_NONE)
            fprintf(f, ", driven by %s (%s)",
                    j->driven == RIGMAT_DRIVEN_POSITION ? "position"
                    : j->driven == RIGMAT_DRIVEN_VELOCITY ? "velocity" : "acceleration",
                    j->role == RIGMAT_ROLE_DISTURBANCE ? "disturbance" : "input");
        fputc('\n', f);
        joint_relations(m, j, angle, sizeof angle, place, sizeof place);
        fprintf(f, "      %s\n      %s\n", angle, place);
    }
    fprintf(f, "\nstates (%zu), order hash %s\n", l->nx, l->order_hash);
    signals_text(f, l->states, 0, l->nx);
    fprintf(f, "\ninputs: control (%zu)\n", l->nu_control);
    signals_text(f, l->inputs, 0, l->nu_control);
    fprintf(f, "inputs: disturbance (%zu)\n", l->nu - l->nu_control);
    signals_text(f, l->inputs, l->nu_control, l->nu);
    fprintf(f, "\noutputs (%zu)\n", l->ny);
    signals_text(f, l->outputs, 0, l->ny);
    if (m->nmotors > 0)
        fputs("\nmotors (values at the motor shaft, one motor)\n", f);
    for (i = 0; i < m->nmotors; i++) {
        const rigmat_motor *mo = &m->motors[i];
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
                mo->gear_ratio, mo->efficiency, mo->count, mo->polarity,
                rigmat_drive_kind_desc(mo->drive)->word);
        if (rigmat_drive_kind_desc(mo->drive)->needs_supply)
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
    }
    if (rate_hz > 0.0)
        fprintf(f, "\nnoise per sample at %.6g Hz (T = %.6g s)\n", rate_hz, 1.0 / rate_hz);
    else
        fputs("\nnoise per sample (give --rate for white densities)\n", f);
    for (i = 0; i < m->nsensors; i++) {
        const rigmat_sensor *s = &m->sensors[i];
        const double sd = sensor_sd(s, rate_hz);
        if (s->noise == 0.0 && s->density == 0.0 && sensor_resolution(s) == 0.0)
            fprintf(f, "  %-12s sensor, noiseless\n", s->name);
        else if (sd < 0.0)
            fprintf(f, "  %-12s sensor, needs --rate\n", s->name);
        else
            fprintf(f, "  %-12s sensor, sd %.6g %s%s\n", s->name, sd * fabs(s->gain),
                    rigmat_sensor_measured_unit(m, s), s->gain != 1.0 ? " (times |gain|)" : "");
    }
    for (i = 0; i < m->nforces; i++) {
        const rigmat_force *fo = &m->forces[i];
        const double sd = density_sd(fo->density, fo->bandwidth_hz, rate_hz);
        const char *u = rigmat_units_kind_symbol(rigmat_force_effort(m, fo));
        if (fo->density <= 0.0)
            continue;
        if (sd < 0.0)
            fprintf(f, "  %-12s disturbance, needs --rate\n", fo->name);
        else
            fprintf(f, "  %-12s disturbance, sd %.6g %s\n", fo->name, sd, u);
    }
    for (i = 0; i < m->njoints; i++) {
        const rigmat_joint *j = &m->joints[i];
        const double sd = density_sd(j->density, j->bandwidth_hz, rate_hz);
        if (j->driven == RIGMAT_DRIVEN_NONE || j->density <= 0.0)
            continue;
        if (sd < 0.0)
            fprintf(f, "  %-12s driven joint, needs --rate\n", j->name);
        else
            fprintf(f, "  %-12s driven joint, sd %.6g (SI)\n", j->name, sd);
    }
    fputs("\noperating point\n", f);
    settings_text(f, "coordinates", m->op_coordinates, m->nop_coordinates);
    settings_text(f, "rates", m->op_rates, m->nop_rates);
    settings_text(f, "inputs", m->op_inputs, m->nop_inputs);
    fputs("  solve:", f);
    for (i = 0; i < m->op_solve.count; i++)
        fprintf(f, "%s %s", i ? "," : "", m->op_solve.names[i]);
    fputs(m->op_solve.count ? "\n" : " nothing\n", f);
}

static void json_vec2(struct cli_json *j, const double v[2])
{
    cli_json_arr_open(j);
    cli_json_num(j, v[0]);
    cli_json_num(j, v[1]);
    cli_json_arr_close(j);
}

static void json_settings(struct cli_json *j, const char *key, const rigmat_setting *s, size_t n)
{
    size_t i;
    cli_json_key(j, key);
    cli_json_obj_open(j);
    for (i = 0; i < n; i++) {
        cli_json_key(j, s[i].name);
        cli_json_num(j, s[i].value);
    }
    cli_json_obj_close(j);
}

static void json_noise(struct cli_json *j, const char *name, const char *kind, double sd,
        const char *unit)
{
    cli_json_obj_open(j);
    cli_json_key(j, "name");
    cli_json_str(j, name);
    cli_json_key(j, "kind");
    cli_json_str(j, kind);
    cli_json_key(j, "sd_per_sample");
    if (sd < 0.0)
        cli_json_null(j);
    else
        cli_json_num(j, sd);
    cli_json_key(j, "unit");
    cli_json_str(j, unit);
    cli_json_obj_close(j);
}

static rigmat_status check_json(struct cli_env *env, FILE *f, const rigmat_model *m,
        double rate_hz)
{
    struct cli_json j;
    size_t i;

    cli_json_begin(&j, f);
    cli_json_head(&j, m, "check");
    cli_json_key(&j, "file");
    cli_json_str(&j, m->file);
    cli_json_key(&j, "gravity");
    cli_json_num(&j, m->gravity_m_s2);
    cli_json_key(&j, "slope");
    cli_json_num(&j, m->slope_rad);
    cli_json_key(&j, "nu_control");
    cli_json_int(&j, (long)m->layout.nu_control);
    cli_json_key(&j, "bodies");
    cli_json_arr_open(&j);
    for (i = 1; i < m->nbodies; i++) {
        const rigmat_body *b = &m->bodies[i];
        cli_json_obj_open(&j);
        cli_json_key(&j, "name");
        cli_json_str(&j, b->name);
        cli_json_key(&j, "mass");
        cli_json_num(&j, b->mass_kg);
        cli_json_key(&j, "inertia");
        cli_json_num(&j, b->inertia_kgm2);
        cli_json_key(&j, "com");
        json_vec2(&j, b->com_m);
        cli_json_key(&j, "shape");
        cli_json_str(&j, rigmat_shape_kind_desc(b->shape)->word);
        cli_json_obj_close(&j);
    }
    cli_json_arr_close(&j);
    cli_json_key(&j, "joints");
    cli_json_arr_open(&j);
    for (i = 0; i < m->njoints; i++) {
        const rigmat_joint *jt = &m->joints[i];
        char angle[256], place[256], coord[160];
        joint_relations(m, jt, angle, sizeof angle, place, sizeof place);
        cli_json_obj_open(&j);
        cli_json_key(&j, "name");
        cli_json_str(&j, jt->name);
        cli_json_key(&j, "type");
        cli_json_str(&j, rigmat_joint_kind(jt->type)->word);
        cli_json_key(&j, "parent");
        cli_json_str(&j, m->bodies[jt->parent].name);
        cli_json_key(&j, "child");
        cli_json_str(&j, m->bodies[jt->child].name);
        cli_json_key(&j, "coordinate");
        if (!rigmat_joint_kind(jt->type)->has_coordinate) {
            cli_json_null(&j);
        } else {
            snprintf(coord, sizeof coord, "%s%s", jt->name, rigmat_joint_kind(jt->type)->suffix[0]);
            cli_json_str(&j, coord);
        }
        cli_json_key(&j, "angle_relation");
        cli_json_str(&j, angle);
        cli_json_key(&j, "position_relation");
        cli_json_str(&j, place);
        cli_json_obj_close(&j);
    }
    cli_json_arr_close(&j);
    cli_json_key(&j, "motors");
    cli_json_arr_open(&j);
    for (i = 0; i < m->nmotors; i++) {
        const rigmat_motor *mo = &m->motors[i];
        cli_json_obj_open(&j);
        cli_json_key(&j, "name");
        cli_json_str(&j, mo->name);
        cli_json_key(&j, "form");
        cli_json_str(&j, mo->datasheet ? "datasheet" : "circuit");
        cli_json_key(&j, "resistance");
        cli_json_num(&j, mo->resistance_ohm);
        cli_json_key(&j, "inductance");
        if (mo->inductance_neglected)
            cli_json_null(&j);
        else
            cli_json_num(&j, mo->inductance_h);
        cli_json_key(&j, "torque_constant");
        cli_json_num(&j, mo->torque_constant_nm_a);
        cli_json_key(&j, "back_emf_constant");
        cli_json_num(&j, mo->back_emf_v_s_rad);
        cli_json_key(&j, "rotor_inertia");
        cli_json_num(&j, mo->rotor_inertia_kgm2);
        cli_json_key(&j, "friction");
        cli_json_num(&j, mo->friction_nm_s_rad);
        cli_json_key(&j, "gear_ratio");
        cli_json_num(&j, mo->gear_ratio);
        cli_json_key(&j, "efficiency");
        cli_json_num(&j, mo->efficiency);
        cli_json_key(&j, "count");
        cli_json_int(&j, (long)mo->count);
        cli_json_key(&j, "polarity");
        cli_json_int(&j, mo->polarity);
        cli_json_key(&j, "drive");
        cli_json_str(&j, rigmat_drive_kind_desc(mo->drive)->word);
        if (mo->datasheet) {
            cli_json_key(&j, "kt_from_sheet");
            cli_json_num(&j, mo->kt_from_sheet);
            cli_json_key(&j, "ke_from_sheet");
            cli_json_num(&j, mo->ke_from_sheet);
            cli_json_key(&j, "mismatch");
            cli_json_num(&j, kt_ke_mismatch(mo));
        }
        cli_json_obj_close(&j);
    }
    cli_json_arr_close(&j);
    cli_json_key(&j, "rate");
    if (rate_hz > 0.0)
        cli_json_num(&j, rate_hz);
    else
        cli_json_null(&j);
    cli_json_key(&j, "noise");
    cli_json_arr_open(&j);
    for (i = 0; i < m->nsensors; i++) {
        const rigmat_sensor *s = &m->sensors[i];
        const double sd = sensor_sd(s, rate_hz);
        json_noise(&j, s->name, "sensor", sd < 0.0 ? sd : sd * fabs(s->gain),
                rigmat_sensor_measured_unit(m, s));
    }
    for (i = 0; i < m->nforces; i++) {
        const rigmat_force *fo = &m->forces[i];
        if (fo->density > 0.0)
            json_noise(&j, fo->name, "disturbance",
                    density_sd(fo->density, fo->bandwidth_hz, rate_hz),
                    rigmat_units_kind_symbol(rigmat_force_effort(m, fo)));
    }
    cli_json_arr_close(&j);
    cli_json_key(&j, "operating_point");
    cli_json_obj_open(&j);
    json_settings(&j, "coordinates", m->op_coordinates, m->nop_coordinates);
    json_settings(&j, "rates", m->op_rates, m->nop_rates);
    json_settings(&j, "inputs", m->op_inputs, m->nop_inputs);
    cli_json_key(&j, "solve");
    cli_json_arr_open(&j);
    for (i = 0; i < m->op_solve.count; i++)
        cli_json_str(&j, m->op_solve.names[i]);
    cli_json_arr_close(&j);
    cli_json_obj_close(&j);
    check_sign_table(env, m, 1, &j);
    return cli_json_end(&j);
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
    rigmat_model *m = NULL;
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
    st = cli_load_model(env, file, &c, &m);
    if (st != RIGMAT_OK)
        return st;
    if (fmt == 1)
        st = check_json(env, env->out, m, rate_hz);
    else {
        check_text(env->out, m, rate_hz);
        check_sign_table(env, m, 0, NULL);
        cli_modes_summary(env, m, NULL);
    }
    rigmat_model_free(m);
    return st;
}
