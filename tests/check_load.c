/* check_load.c - the model loader: every example and catalog part loads,
 * every broken model in tests/bad/ gets its exact diagnostic, --set, the
 * part lookup order, the derived values (shapes, datasheet motors) and the
 * input limits.  Runs from tests/ (the Makefile's check-unit does `cd
 * tests`), so the corpus is bad/ and the examples ../examples. */
/* realpath() is an XSI function, outside _POSIX_C_SOURCE alone */
#define _XOPEN_SOURCE 700
#include "testutil.h"
#include "load.h"

#include <check.h>
#include <dirent.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#define MAX_FILES 512
#define PI 3.14159265358979323846

struct file_list {
    char *names[MAX_FILES];
    size_t n;
};

static int cmp_str(const void *a, const void *b)
{
    return strcmp(*(char *const *)a, *(char *const *)b);
}

/* The *.yaml files of a folder, sorted (so loop indices are stable). */
static void list_yaml(const char *dir, struct file_list *l)
{
    DIR *d = opendir(dir);
    struct dirent *de;

    l->n = 0;
    if (d == NULL)
        return;
    while ((de = readdir(d)) != NULL && l->n < MAX_FILES) {
        const size_t len = strlen(de->d_name);
        char *p;
        if (len <= 5 || strcmp(de->d_name + len - 5, ".yaml") != 0)
            continue;
        p = malloc(strlen(dir) + len + 2);
        sprintf(p, "%s/%s", dir, de->d_name);
        l->names[l->n++] = p;
    }
    closedir(d);
    qsort(l->names, l->n, sizeof l->names[0], cmp_str);
}

static void free_list(struct file_list *l)
{
    size_t i;
    for (i = 0; i < l->n; i++)
        free(l->names[i]);
    l->n = 0;
}

static size_t count_yaml(const char *dir)
{
    struct file_list l;
    size_t n;
    list_yaml(dir, &l);
    n = l.n;
    free_list(&l);
    return n;
}

/* All diagnostics as text, for failure messages. */
static void diags_text(const rigmat_diags *d, char *buf, size_t len)
{
    FILE *f = fmemopen(buf, len, "w");
    buf[0] = '\0';
    if (f == NULL)
        return;
    rigmat_diags_print(d, f);
    fclose(f);
    buf[len - 1] = '\0';
}

static rigmat_status load(const char *path, const char *const *sets, size_t nsets,
        rigmat_model **m, rigmat_diags *d)
{
    rigmat_options opt = rigmat_options_default();
    opt.catalog_dir = "../catalog";
    rigmat_status st;

    rigmat_diags_init(d);
    st = rigmat_model_load(path, sets, nsets, &opt, m, d);
    /* the checks that need the equations come after loading, as in the
     * program (src/cli/common.c) */
    if (st == RIGMAT_OK) {
        st = rigmat_model_check_equations(*m, d);
        if (st != RIGMAT_OK) {
            rigmat_model_free(*m);
            *m = NULL;
        }
    }
    return st;
}

/* A fresh temporary folder holding one file. */
static void write_file(const char *path, const char *text)
{
    FILE *f = fopen(path, "w");
    ck_assert_ptr_nonnull(f);
    fputs(text, f);
    ck_assert_int_eq(fclose(f), 0);
}

static char *temp_dir(void)
{
    char tmpl[] = "/tmp/rigmat-load-XXXXXX";
    char *d = mkdtemp(tmpl);
    ck_assert_ptr_nonnull(d);
    return strdup(d);
}

static void remove_tree(const char *dir)
{
    char cmd[512];
    /* only ever a folder this suite made under /tmp */
    ck_assert(strncmp(dir, "/tmp/rigmat-load-", 17) == 0);
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
    ck_assert_int_eq(system(cmd), 0);
}

/* ------------------------------------------------------- the bad corpus */

START_TEST(bad_model_gets_its_diagnostic)
{
    struct file_list l;
    char line[512], text[8192], frag[400];
    unsigned long want_line = 0, want_col = 0;
    rigmat_model *m = NULL;
    rigmat_diags d;
    rigmat_status st;
    FILE *f;
    size_t i;
    int found = 0, n = 0;

    list_yaml("bad", &l);
    ck_assert_uint_gt(l.n, (size_t)_i);
    f = fopen(l.names[_i], "r");
    ck_assert_ptr_nonnull(f);
    ck_assert_ptr_nonnull(fgets(line, sizeof line, f));
    fclose(f);
    line[strcspn(line, "\n")] = '\0';
    ck_assert_msg(sscanf(line, "# expect: %lu:%lu: %n", &want_line, &want_col, &n) == 2 && n > 0,
            "%s: first line must be '# expect: LINE:COL: fragment'", l.names[_i]);
    snprintf(frag, sizeof frag, "%s", line + n);
    st = load(l.names[_i], NULL, 0, &m, &d);
    diags_text(&d, text, sizeof text);
    ck_assert_msg(st == RIGMAT_EMODEL, "%s: status %d, want a bad model\n%s", l.names[_i], st,
            text);
    ck_assert_ptr_null(m);
    for (i = 0; i < d.count && !found; i++)
        found = d.items[i].severity == RIGMAT_ERROR && d.items[i].where.line == want_line &&
                d.items[i].where.col == want_col && strstr(d.items[i].message, frag) != NULL;
    ck_assert_msg(found, "%s: no error at %lu:%lu containing '%s'; got:\n%s", l.names[_i],
            want_line, want_col, frag, text);
    /* one mistake, one error: nothing downstream may repeat it */
    ck_assert_msg(d.errors == 1, "%s: %zu errors for one mistake; got:\n%s", l.names[_i],
            d.errors, text);
    rigmat_diags_release(&d);
    free_list(&l);
}
END_TEST

START_TEST(corpus_has_forty_models)
{
    ck_assert_uint_ge(count_yaml("bad"), 40);
}
END_TEST

/* ----------------------------------------------- examples, catalog parts */

START_TEST(example_loads)
{
    struct file_list l;
    rigmat_options opt = rigmat_options_default();
    rigmat_model *m = NULL;
    rigmat_diags d;
    rigmat_status st;
    char text[8192];

    list_yaml("../examples", &l);
    ck_assert_uint_gt(l.n, (size_t)_i);
    rigmat_diags_init(&d);
    /* no --catalog: the examples find ../catalog by the lookup order */
    st = rigmat_model_load(l.names[_i], NULL, 0, &opt, &m, &d);
    diags_text(&d, text, sizeof text);
    ck_assert_msg(st == RIGMAT_OK, "%s: status %d\n%s", l.names[_i], st, text);
    ck_assert_uint_eq(d.errors, 0);
    ck_assert_ptr_nonnull(m);
    ck_assert_str_eq(m->bodies[0].name, "ground");
    ck_assert_uint_gt(m->nbodies, 1);
    rigmat_model_free(m);
    rigmat_diags_release(&d);
    free_list(&l);
}
END_TEST

/* Every part under ../catalog/<kind>/, placed in a tiny model that fits
 * its kind, loads without errors. */
static void part_loads(const char *kind, size_t i)
{
    char dir_path[64], model[2048], name[256], text[8192], real_cat[4096];
    struct file_list l;
    rigmat_options opt = rigmat_options_default();
    rigmat_model *m = NULL;
    rigmat_diags d, files;
    rigmat_node *tree = NULL;
    const rigmat_entry *meas;
    char *tmp, *path;
    const char *base;
    rigmat_status st;

    snprintf(dir_path, sizeof dir_path, "../catalog/%s", kind);
    list_yaml(dir_path, &l);
    ck_assert_msg(l.n > 0, "no parts in %s", dir_path);
    ck_assert_uint_lt(i, l.n);
    base = strrchr(l.names[i], '/') + 1;
    snprintf(name, sizeof name, "%s/%.*s", kind, (int)(strlen(base) - 5), base);
    rigmat_diags_init(&files);
    rigmat_diags_init(&d);
    ck_assert_int_eq(rigmat_load_yaml_file(l.names[i], &opt, &files, &d, &tree), RIGMAT_OK);
    meas = rigmat_node_get(tree, "measures");
    if (strcmp(kind, "motors") == 0)
        snprintf(model, sizeof model, "rigmat: 1\nbodies:\n  arm: {mass: 0.35 kg}\njoints:\n"
                "  spin: {type: hinge, parent: ground, child: arm}\nmotors:\n"
                "  m1: {part: %s, across: spin}\n", name);
    else if (strcmp(kind, "wheels") == 0)
        snprintf(model, sizeof model, "rigmat: 1\nbodies:\n  w: {part: %s}\njoints:\n"
                "  roll: {type: rolling, parent: ground, child: w, radius: 61 mm}\n", name);
    else
        snprintf(model, sizeof model, "rigmat: 1\nbodies:\n  arm: {mass: 0.35 kg}\njoints:\n"
                "  spin: {type: hinge, parent: ground, child: arm}\nmotors:\n"
                "  m1: {resistance: 2.4 ohm, inductance: 1.1 mH, torque_constant: 0.036 N*m/A,\n"
                "       rotor_inertia: 3.3 g*cm^2, across: spin}\nsensors:\n  s1: {part: %s, "
                "of: %s%s}\n", name,
                meas && strcmp(meas->value->text, "motor_angle") == 0 ? "m1"
                : meas && strcmp(meas->value->text, "current") == 0   ? "m1"
                : meas && (strcmp(meas->value->text, "position") == 0 ||
                                  strcmp(meas->value->text, "velocity") == 0) &&
                                rigmat_node_get(tree, "at") == NULL
                        ? "spin" : "arm",
                meas && strcmp(meas->value->text, "specific_force") == 0 &&
                                rigmat_node_get(tree, "axis") == NULL
                        ? ", at: [0, 0.25 m], axis: x" : "");
    rigmat_node_free(tree);
    tmp = temp_dir();
    path = malloc(strlen(tmp) + 16);
    sprintf(path, "%s/model.yaml", tmp);
    write_file(path, model);
    ck_assert_ptr_nonnull(realpath("../catalog", real_cat));
    opt.catalog_dir = real_cat;
    st = rigmat_model_load(path, NULL, 0, &opt, &m, &d);
    diags_text(&d, text, sizeof text);
    ck_assert_msg(st == RIGMAT_OK, "part %s: status %d\n%s", name, st, text);
    rigmat_model_free(m);
    rigmat_diags_release(&d);
    rigmat_diags_release(&files);
    remove_tree(tmp);
    free(path);
    free(tmp);
    free_list(&l);
}

START_TEST(motor_part_loads)
{
    part_loads("motors", (size_t)_i);
}
END_TEST

START_TEST(sensor_part_loads)
{
    part_loads("sensors", (size_t)_i);
}
END_TEST

START_TEST(wheel_part_loads)
{
    part_loads("wheels", (size_t)_i);
}
END_TEST

/* ------------------------------------------------------- derived values */

static rigmat_model *load_text(const char *text, rigmat_diags *d, rigmat_status want)
{
    char *tmp = temp_dir(), path[256], msg[8192];
    rigmat_model *m = NULL;
    rigmat_status st;

    snprintf(path, sizeof path, "%s/m.yaml", tmp);
    write_file(path, text);
    st = load(path, NULL, 0, &m, d);
    diags_text(d, msg, sizeof msg);
    ck_assert_msg(st == want, "status %d, want %d\n%s", st, want, msg);
    remove_tree(tmp);
    free(tmp);
    return m;
}

START_TEST(shapes_give_inertia_about_com)
{
    rigmat_diags d;
    rigmat_model *m = load_text("rigmat: 1\nbodies:\n"
            "  disc: {mass: 0.31 kg, shape: {disc: {radius: 61 mm}}}\n"
            "  ring: {mass: 0.31 kg, shape: {ring: {radius: 61 mm}}}\n"
            "  ball: {mass: 67 g, shape: {sphere: {radius: 12.7 mm}}}\n"
            "  slab: {mass: 0.16 kg, shape: {box: {width: 0.40 m, height: 20 mm}}}\n"
            "  pole: {mass: 0.21 kg, shape: {rod: {length: 0.62 m, direction: 30 deg}}}\n"
            "  dot:  {mass: 0.05 kg, shape: point, com: [3 mm, 4 mm]}\n"
            "joints:\n"
            "  j1: {type: hinge, parent: ground, child: disc}\n"
            "  j2: {type: hinge, parent: ground, child: ring}\n"
            "  j3: {type: hinge, parent: ground, child: ball}\n"
            "  j4: {type: hinge, parent: ground, child: slab}\n"
            "  j5: {type: hinge, parent: ground, child: pole}\n"
            "  j6: {type: hinge, parent: ground, child: dot}\n", &d, RIGMAT_OK);
    /* common practice: disc m r^2/2, ring m r^2, sphere 2/5 m r^2,
     * box m (w^2 + h^2)/12, rod m L^2/12 about its middle */
    ck_assert_rel(m->bodies[1].inertia_kgm2, 0.31 * 0.061 * 0.061 / 2, 1e-14);
    ck_assert_rel(m->bodies[2].inertia_kgm2, 0.31 * 0.061 * 0.061, 1e-14);
    ck_assert_rel(m->bodies[3].inertia_kgm2, 0.4 * 0.067 * 0.0127 * 0.0127, 1e-14);
    ck_assert_rel(m->bodies[4].inertia_kgm2, 0.16 * (0.16 + 0.0004) / 12, 1e-14);
    ck_assert_rel(m->bodies[5].inertia_kgm2, 0.21 * 0.62 * 0.62 / 12, 1e-14);
    ck_assert_rel(m->bodies[5].com_m[0], 0.31 * cos(PI / 6), 1e-14);
    ck_assert_rel(m->bodies[5].com_m[1], 0.31 * sin(PI / 6), 1e-14);
    ck_assert_rel(m->bodies[6].inertia_kgm2, 0.0, 0.0);
    ck_assert_rel(m->bodies[6].com_m[1], 0.004, 1e-14);
    ck_assert_uint_eq(m->bodies[5].joint, 4);
    ck_assert_uint_eq(rigmat_model_body(m, "pole"), 5);
    ck_assert_uint_eq(rigmat_model_joint(m, "j5"), 4);
    ck_assert_uint_eq(rigmat_model_body(m, "nothing"), RIGMAT_NONE);
    rigmat_model_free(m);
    rigmat_diags_release(&d);
}
END_TEST

START_TEST(rod_default_direction_is_up)
{
    rigmat_diags d;
    rigmat_model *m = load_text("rigmat: 1\nbodies:\n"
            "  pole: {mass: 0.21 kg, shape: {rod: {length: 0.62 m}}}\n"
            "joints:\n  pivot: {type: hinge, parent: ground, child: pole, at: [0, 45 mm]}\n",
            &d, RIGMAT_OK);
    ck_assert_rel(m->bodies[1].com_m[1], 0.31, 1e-15);
    ck_assert(fabs(m->bodies[1].com_m[0]) < 1e-16);
    ck_assert_rel(m->joints[0].at_m[1], 0.045, 1e-15);
    rigmat_model_free(m);
    rigmat_diags_release(&d);
}
END_TEST

static const char datasheet_head[] = "rigmat: 1\nbodies:\n  arm: {mass: 0.35 kg}\njoints:\n"
        "  spin: {type: hinge, parent: ground, child: arm}\nmotors:\n  m1:\n"
        "    inductance: 2 mH\n    rotor_inertia: 1e-5 kg*m^2\n    across: spin\n";

START_TEST(datasheet_motor_figures)
{
    char text[1024];
    rigmat_diags d;
    rigmat_model *m;
    const rigmat_motor *mo;

    /* common practice (README.md, "Motors: gearbox, efficiency, count", worked):
     * R = V/I_stall, Kt = T/I_stall, Ke = (V - R I_nl)/w_nl, b = Kt I_nl/w_nl;
     * V 12, I_stall 5, T_stall 0.18,
     * I_nl 0.2, w_nl 320 rad/s = 3055.7749073643904 rpm */
    snprintf(text, sizeof text, "%s    rated_voltage: 12 V\n    stall_torque: 0.18 N*m\n"
            "    stall_current: 5 A\n    no_load_speed: 3055.7749073643904 rpm\n"
            "    no_load_current: 0.2 A\n", datasheet_head);
    m = load_text(text, &d, RIGMAT_OK);
    mo = &m->motors[0];
    ck_assert_int_eq(mo->datasheet, 1);
    ck_assert_rel(mo->resistance_ohm, 2.4, 1e-14);
    ck_assert_rel(mo->torque_constant_nm_a, 0.036, 1e-14);
    ck_assert_rel(mo->back_emf_v_s_rad, 0.036, 1e-12);
    ck_assert_rel(mo->friction_nm_s_rad, 2.25e-5, 1e-12);
    ck_assert_rel(mo->ke_from_sheet, mo->back_emf_v_s_rad, 0.0);
    ck_assert_uint_eq(d.count, 0); /* a consistent sheet: no mismatch warning */
    rigmat_model_free(m);
    rigmat_diags_release(&d);
}
END_TEST

START_TEST(datasheet_output_figures_move_to_motor)
{
    char text[1024];
    rigmat_diags d;
    rigmat_model *m;
    const rigmat_motor *mo;

    /* the same motor behind N = 20, eta = 0.8 (common practice: T_out = eta N T_m,
     * w_out = w_m / N):
     * output stall torque 0.18*20*0.8 = 2.88 N*m, output speed 16 rad/s */
    snprintf(text, sizeof text, "%s    rated_voltage: 12 V\n    stall_torque: 2.88 N*m\n"
            "    stall_current: 5 A\n    no_load_speed: 16 rad/s\n"
            "    no_load_current: 0.2 A\n    figures_at: output\n    gear_ratio: 20\n"
            "    efficiency: 0.8\n", datasheet_head);
    m = load_text(text, &d, RIGMAT_OK);
    mo = &m->motors[0];
    ck_assert_int_eq(mo->figures_at_output, 1);
    ck_assert_rel(mo->kt_from_sheet, 0.036, 1e-14);
    ck_assert_rel(mo->ke_from_sheet, 0.036, 1e-14);
    /* b = eta Kt I_nl / w_motor: the no-load point is a steady state */
    ck_assert_rel(mo->friction_nm_s_rad, 0.8 * 0.036 * 0.2 / 320.0, 1e-14);
    ck_assert_uint_eq(mo->stator, 0);
    ck_assert_uint_eq(mo->rotor, 1);
    rigmat_model_free(m);
    rigmat_diags_release(&d);
}
END_TEST

START_TEST(datasheet_mismatch_warns)
{
    char text[1024];
    rigmat_diags d;
    rigmat_model *m;

    snprintf(text, sizeof text, "%s    rated_voltage: 12 V\n    stall_torque: 0.23 N*m\n"
            "    stall_current: 5 A\n    no_load_speed: 320 rad/s\n"
            "    no_load_current: 0.2 A\n", datasheet_head);
    m = load_text(text, &d, RIGMAT_OK);
    ck_assert_uint_eq(d.errors, 0);
    ck_assert_uint_eq(d.count, 1);
    ck_assert_int_eq(d.items[0].severity, RIGMAT_WARNING);
    ck_assert_ptr_nonnull(strstr(d.items[0].message, "differ by"));
    ck_assert_rel(m->motors[0].torque_constant_nm_a, 0.046, 1e-14);
    rigmat_model_free(m);
    rigmat_diags_release(&d);
}
END_TEST

START_TEST(motor_defaults_and_slider_placement)
{
    rigmat_diags d;
    rigmat_model *m = load_text("rigmat: 1\nbodies:\n  cart: {mass: 0.94 kg}\njoints:\n"
            "  track: {type: slider, parent: ground, child: cart, axis: 90 deg}\nmotors:\n"
            "  m1: {resistance: 2.4 ohm, inductance: neglect, torque_constant: 0.036 N*m/A,\n"
            "       rotor_inertia: 0, across: track, mounted_on: child, lead: 4 mm}\n", &d,
            RIGMAT_OK);
    const rigmat_motor *mo = &m->motors[0];
    ck_assert_int_eq(mo->inductance_neglected, 1);
    ck_assert_rel(mo->back_emf_v_s_rad, 0.036, 0.0);
    ck_assert_rel(mo->gear_ratio, 1.0, 0.0);
    ck_assert_rel(mo->efficiency, 1.0, 0.0);
    ck_assert_uint_eq(mo->count, 1);
    ck_assert_int_eq(mo->polarity, 1);
    ck_assert_uint_eq(mo->stator, 1);
    ck_assert_uint_eq(mo->rotor, RIGMAT_NONE);
    ck_assert_rel(mo->lead_m, 0.004, 1e-14);
    ck_assert(fabs(m->joints[0].axis[0]) < 1e-15);
    ck_assert_rel(m->joints[0].axis[1], 1.0, 1e-15);
    ck_assert_uint_eq(rigmat_model_motor(m, "m1"), 0);
    rigmat_model_free(m);
    rigmat_diags_release(&d);
}
END_TEST

START_TEST(several_errors_reported_at_once)
{
    rigmat_diags d;
    rigmat_model *m = load_text("rigmat: 1\nbodies:\n  wheel: {mas: 0.31 kg}\n"
            "  chassis: {mass: -4.2 kg}\njoints:\n"
            "  tilt: {type: hinge, parent: wheeel, child: chassis}\n", &d, RIGMAT_EMODEL);
    /* unknown key 'mas' (its "missing 'mass'" is folded into it), negative
     * mass, unknown body, wheel not in the tree: all four, in file order */
    ck_assert_ptr_null(m);
    ck_assert_uint_eq(d.errors, 4);
    ck_assert_ptr_nonnull(strstr(d.items[0].message, "unknown key 'mas'"));
    ck_assert_ptr_nonnull(strstr(d.items[1].message, "'mass' must not be negative"));
    ck_assert_ptr_nonnull(strstr(d.items[2].message, "unknown body 'wheeel'"));
    ck_assert_ptr_nonnull(strstr(d.items[3].message, "body 'wheel' is not attached"));
    rigmat_diags_release(&d);
}
END_TEST

START_TEST(error_count_is_capped)
{
    rigmat_options opt = rigmat_options_default();
    char text[8192], *tmp = temp_dir(), path[256];
    rigmat_model *m = NULL;
    rigmat_diags d;
    size_t used, i;

    used = (size_t)snprintf(text, sizeof text, "rigmat: 1\nbodies:\n");
    for (i = 0; i < 40; i++)
        used += (size_t)snprintf(text + used, sizeof text - used, "  b%zu: {mas: 1}\n", i);
    snprintf(path, sizeof path, "%s/m.yaml", tmp);
    write_file(path, text);
    rigmat_diags_init(&d);
    d.max_errors = 7;
    ck_assert_int_eq(rigmat_model_load(path, NULL, 0, &opt, &m, &d), RIGMAT_EMODEL);
    ck_assert_uint_eq(d.count, 7);
    ck_assert_uint_gt(d.dropped, 0);
    rigmat_diags_release(&d);
    remove_tree(tmp);
    free(tmp);
}
END_TEST

START_TEST(unknown_key_hint_names_nearest)
{
    rigmat_diags d;
    rigmat_model *m = load_text("rigmat: 1\nbodies:\n  w: {mass: 0.31 kg, inertai: 0.002}\n"
            "joints:\n  j: {type: hinge, parent: ground, child: w}\n", &d, RIGMAT_EMODEL);
    ck_assert_ptr_null(m);
    ck_assert_uint_eq(d.errors, 1);
    ck_assert_str_eq(d.items[0].hint, "did you mean 'inertia'?");
    ck_assert_str_eq(d.items[0].within_what, "body 'w'");
    ck_assert_uint_eq(d.items[0].within.line, 3);
    ck_assert_uint_eq(d.items[0].within.col, 3);
    rigmat_diags_release(&d);
}
END_TEST

START_TEST(distance_is_levenshtein)
{
    /* Wagner and Fischer (1974): kitten -> sitting takes 3 edits */
    ck_assert_uint_eq(rigmat_load_distance("kitten", "sitting", 10), 3);
    ck_assert_uint_eq(rigmat_load_distance("mass", "mass", 10), 0);
    ck_assert_uint_eq(rigmat_load_distance("", "abc", 10), 3);
    ck_assert_uint_eq(rigmat_load_distance("resistance", "x", 4), 4);
}
END_TEST

/* --------------------------------------------------------------- --set */

START_TEST(set_overrides_values_and_parts)
{
    const char *sets[] = { "bodies.chassis.com[1]=0.2m", "motors.drive.resistance=2.5ohm",
        "bodies.wheel.mass=0.29 kg", "motors.drive.load_inertia=3.3 g*cm^2" };
    rigmat_model *m = NULL;
    rigmat_diags d;
    char text[4096];
    rigmat_status st = load("../examples/balancer.yaml", sets, 4, &m, &d);

    diags_text(&d, text, sizeof text);
    ck_assert_msg(st == RIGMAT_OK, "%s", text);
    ck_assert_rel(m->bodies[rigmat_model_body(m, "chassis")].com_m[1], 0.2, 1e-15);
    ck_assert_rel(m->motors[0].resistance_ohm, 2.5, 1e-15);
    ck_assert_rel(m->bodies[rigmat_model_body(m, "wheel")].mass_kg, 0.29, 1e-15);
    ck_assert_rel(m->motors[0].load_inertia_kgm2, 3.3e-7, 1e-12);
    ck_assert_str_eq(m->motors[0].part, "motors/gearmotor-24v-27");
    rigmat_model_free(m);
    rigmat_diags_release(&d);
}
END_TEST

/* Each bad override: the text, the column of its error, a fragment. */
static const struct {
    const char *set;
    unsigned long col;
    const char *frag;
} bad_sets[] = {
    { "bodies.chassis.mass", 1, "expected PATH=VALUE" },
    { "=3", 1, "no path before '='" },
    { "bodies.chassis.mass=", 21, "no value after '='" },
    { "bodies.chassis.com[7]=0.2m", 19, "index out of range" },
    { "bodies.chassis.com[x]=0.2m", 19, "expected [index]" },
    { "bodies.chassis.mass[0]=1", 20, "is not a list" },
    { "bodies.chassis.mass.x=1", 21, "not a mapping" },
    { "bodies..mass=1", 8, "expected a key" },
    { "bodies.chassis.mass=4.5 m", 21, "expected a mass" },
    { "bodies.chassis.mas=4.5 kg", 16, "unknown key 'mas'" },
    { "bodies.chassis.inertia_x[0]=1", 16, "does not exist" },
    { "bodies.chassis.mass=[1", 23, "not valid YAML" },
    /* issue 10: parts are not set from the command line; keys are compared
     * whole; a non-ASCII character is shown whole */
    { "motors.drive.part=motors/gearmotor-12v-4", 14, "'part' cannot be set" },
    { "bodies.chassis.part=../../../etc/passwd", 16, "'part' cannot be set" },
    { "bodies.cccccccccccccccccccccccccccccccccccccccccccccccccccccccccccccccc"
      "cccccccccccccccccccccccccccccccccccccccccccccccccccccccccccccccc.mass=1kg", 8,
      "unknown key: a path key of 128 characters" },
    { "bodies\xc3\xa9=1", 7, "unexpected '\xc3\xa9' in the path" },
};

START_TEST(set_errors_point_at_the_command_line)
{
    const char *sets[2];
    rigmat_model *m = NULL;
    rigmat_diags d;
    char text[4096];
    size_t i;
    int found = 0;

    sets[0] = "bodies.wheel.mass=0.29 kg";
    sets[1] = bad_sets[_i].set;
    ck_assert_int_eq(load("../examples/balancer.yaml", sets, 2, &m, &d), RIGMAT_EMODEL);
    diags_text(&d, text, sizeof text);
    for (i = 0; i < d.count && !found; i++)
        found = d.items[i].where.file != NULL && strcmp(d.items[i].where.file, "--set") == 0 &&
                d.items[i].where.line == 2 && d.items[i].where.col == bad_sets[_i].col &&
                strstr(d.items[i].message, bad_sets[_i].frag) != NULL;
    ck_assert_msg(found, "--set %s: want --set:2:%lu '%s', got\n%s", bad_sets[_i].set,
            bad_sets[_i].col, bad_sets[_i].frag, text);
    rigmat_diags_release(&d);
}
END_TEST

START_TEST(set_creates_missing_keys)
{
    const char *sets[] = { "sensors.tilt_rate.measures=rate", "sensors.tilt_rate.of=chassis",
        "operating_point.coordinates.tilt=2 deg" };
    rigmat_model *m = NULL;
    rigmat_diags d;
    char text[4096];
    rigmat_status st = load("../examples/balancer.yaml", sets, 3, &m, &d);

    diags_text(&d, text, sizeof text);
    ck_assert_msg(st == RIGMAT_OK, "%s", text);
    ck_assert_uint_eq(m->nsensors, 4);
    ck_assert_int_eq(m->sensors[3].kind, RIGMAT_SENSE_RATE);
    ck_assert_rel(m->op_coordinates[0].value, 2.0 * PI / 180.0, 1e-15);
    rigmat_model_free(m);
    rigmat_diags_release(&d);
}
END_TEST

/* The texts rigmat_load_op_value takes without the YAML parser are ones
 * the parser reads as the plain scalar of the same characters: a fixed
 * list both ways, then random texts over an alphabet with YAML's
 * indicators (every accepted one parsed and compared). */
static int parses_as_itself(const char *t)
{
    rigmat_options opt = rigmat_options_default();
    rigmat_diags files, d;
    rigmat_node *n = NULL;
    int same;

    rigmat_diags_init(&files);
    rigmat_diags_init(&d);
    same = rigmat_load_yaml_text(t, strlen(t), "--set", 1, 1, &opt, &files, &d, &n) ==
                    RIGMAT_OK && d.errors == 0 && n != NULL && n->type == RIGMAT_NODE_SCALAR &&
            n->plain && strcmp(n->text, t) == 0;
    rigmat_node_free(n);
    rigmat_diags_release(&d);
    rigmat_diags_release(&files);
    return same;
}

START_TEST(plain_number_text_is_its_own_scalar)
{
    static const char *const yes[] = { "0", "-10", "1.5 deg", "-1.2345678901234567e-05 rad/s",
        "+.5", "-.5 m", "3 N*m", "9.80665 m/s^2", "2 kg*m^2", "1e400 deg", "7 (rad)" };
    static const char *const no[] = { "", " 1", "1 ", "1  deg", "- 1", "-", ".", "deg",
        "1 deg # c", "1: 2", "'1'", "\"1\"", "[1]", "{a: 1}", "1,2", "&a 1", "*a", "!x 1",
        "%1", "1 #", "1\tdeg", "---", "~", "null", "1\n2" };
    static const char alphabet[] = "0123456789.+-*/^_() eadgmsN:#'\"[]{},&!%|>?@`~\t";
    unsigned long seed = 12345u;
    size_t i, k, accepted = 0;
    char t[24];

    for (i = 0; i < sizeof yes / sizeof yes[0]; i++) {
        ck_assert_msg(rigmat_load_plain_number_text(yes[i]), "'%s' refused", yes[i]);
        ck_assert_msg(parses_as_itself(yes[i]), "'%s' parses otherwise", yes[i]);
    }
    for (i = 0; i < sizeof no / sizeof no[0]; i++)
        ck_assert_msg(!rigmat_load_plain_number_text(no[i]), "'%s' taken", no[i]);
    for (i = 0; i < 40000; i++) {
        const size_t len = 1 + i % (sizeof t - 1);
        for (k = 0; k < len; k++) {
            seed = seed * 6364136223846793005ul + 1442695040888963407ul;
            t[k] = alphabet[(seed >> 33) % (sizeof alphabet - 1)];
        }
        t[len] = '\0';
        if (i % 2 == 0 && len > 1)
            t[0] = (char)('0' + i % 10); /* half start as a number does */
        if (rigmat_load_plain_number_text(t)) {
            accepted++;
            ck_assert_msg(parses_as_itself(t), "'%s' taken, but YAML reads it otherwise", t);
        }
    }
    ck_assert_uint_gt(accepted, 1000);
}
END_TEST

/* ------------------------------------------------------ parts and limits */

START_TEST(part_lookup_order)
{
    char *tmp = temp_dir(), p[512], first[512];
    rigmat_options opt = rigmat_options_default();
    rigmat_error e;
    char *found = NULL;

    memset(&e, 0, sizeof e);
    snprintf(p, sizeof p, "%s/first", tmp);
    mkdir(p, 0700);
    snprintf(p, sizeof p, "%s/proj", tmp);
    mkdir(p, 0700);
    snprintf(p, sizeof p, "%s/proj/catalog", tmp);
    mkdir(p, 0700);
    snprintf(p, sizeof p, "%s/proj/models", tmp);
    mkdir(p, 0700);
    snprintf(p, sizeof p, "%s/first/x.yaml", tmp);
    write_file(p, "mass: 1\n");
    snprintf(p, sizeof p, "%s/proj/catalog/x.yaml", tmp);
    write_file(p, "mass: 2\n");
    snprintf(p, sizeof p, "%s/proj/models/m.yaml", tmp);
    write_file(p, "rigmat: 1\n");
    /* MODELDIR/../catalog finds the project's catalog */
    ck_assert_int_eq(rigmat_load_part_path("x", p, &opt, &found, &e), RIGMAT_OK);
    ck_assert_ptr_nonnull(strstr(found, "proj/models/../catalog/x.yaml"));
    free(found);
    /* --catalog comes first */
    snprintf(first, sizeof first, "%s/first", tmp);
    opt.catalog_dir = first;
    ck_assert_int_eq(rigmat_load_part_path("x", p, &opt, &found, &e), RIGMAT_OK);
    ck_assert_ptr_nonnull(strstr(found, "/first/x.yaml"));
    free(found);
    /* not found: an input error, whose hint names every folder searched */
    ck_assert_int_eq(rigmat_load_part_path("y", p, &opt, &found, &e), RIGMAT_EIO);
    ck_assert_ptr_null(found);
    ck_assert_ptr_nonnull(strstr(e.message, "not found"));
    ck_assert_ptr_nonnull(strstr(e.hint, "/first, "));
    ck_assert_ptr_nonnull(strstr(e.hint, "proj/models, "));
    ck_assert_ptr_nonnull(strstr(e.hint, "proj/models/../catalog"));
    /* not a part name at all: bad usage */
    ck_assert_int_eq(rigmat_load_part_path("a/./x", p, &opt, &found, &e), RIGMAT_EUSAGE);
    ck_assert_int_eq(rigmat_load_part_path("", p, &opt, &found, &e), RIGMAT_EUSAGE);
    ck_assert_int_eq(rigmat_load_part_path("x/", p, &opt, &found, &e), RIGMAT_EUSAGE);
    ck_assert_int_eq(rigmat_load_part_path("x y", p, &opt, &found, &e), RIGMAT_EUSAGE);
    remove_tree(tmp);
    free(tmp);
}
END_TEST

START_TEST(part_symlink_cannot_escape)
{
    char *tmp = temp_dir(), p[512], link[512];
    rigmat_options opt = rigmat_options_default();
    rigmat_error e;
    char *found = NULL;

    memset(&e, 0, sizeof e);
    snprintf(p, sizeof p, "%s/cat", tmp);
    mkdir(p, 0700);
    snprintf(p, sizeof p, "%s/secret.yaml", tmp);
    write_file(p, "mass: 1\n");
    snprintf(link, sizeof link, "%s/cat/leak.yaml", tmp);
    ck_assert_int_eq(symlink(p, link), 0);
    snprintf(p, sizeof p, "%s/cat", tmp);
    opt.catalog_dir = p;
    ck_assert_int_eq(rigmat_load_part_path("leak", NULL, &opt, &found, &e), RIGMAT_EMODEL);
    ck_assert_ptr_nonnull(strstr(e.message, "outside its catalog folder"));
    ck_assert_ptr_null(found);
    remove_tree(tmp);
    free(tmp);
}
END_TEST

START_TEST(part_keys_are_overridden_by_the_model)
{
    rigmat_diags d;
    char text[1024];
    rigmat_model *m;

    snprintf(text, sizeof text, "rigmat: 1\nbodies:\n  w: {part: wheels/wheel-65mm, mass: 57 g}\n"
            "joints:\n  roll: {type: rolling, parent: ground, child: w, radius: 32.5 mm}\n");
    m = load_text(text, &d, RIGMAT_OK);
    ck_assert_rel(m->bodies[1].mass_kg, 0.057, 1e-14);
    ck_assert_int_eq(m->bodies[1].shape, RIGMAT_SHAPE_DISC);
    rigmat_model_free(m);
    rigmat_diags_release(&d);
}
END_TEST

START_TEST(limits_stop_large_input)
{
    rigmat_options opt = rigmat_options_default();
    rigmat_diags files, d;
    rigmat_node *root = NULL;
    char *big;
    size_t i, len = 0;

    rigmat_diags_init(&files);
    rigmat_diags_init(&d);
    opt.max_nodes = 1000;
    big = malloc(100000);
    len += (size_t)sprintf(big, "x: [");
    for (i = 0; i < 5000; i++)
        len += (size_t)sprintf(big + len, "1,");
    len += (size_t)sprintf(big + len, "1]\n");
    ck_assert_int_eq(rigmat_load_yaml_text(big, len, "big.yaml", 1, 1, &opt, &files, &d, &root),
            RIGMAT_EMODEL);
    ck_assert_ptr_null(root);
    ck_assert_ptr_nonnull(strstr(d.items[0].message, "more than 1000"));
    free(big);
    rigmat_diags_release(&d);
    rigmat_diags_release(&files);
}
END_TEST

START_TEST(duplicates_in_a_large_mapping)
{
    rigmat_options opt = rigmat_options_default();
    rigmat_diags files, d;
    rigmat_node *root = NULL;
    char *big = malloc(200000);
    size_t i, len = 0;

    rigmat_diags_init(&files);
    rigmat_diags_init(&d);
    for (i = 0; i < 8000; i++)
        len += (size_t)sprintf(big + len, "k%zu: 1\n", i % 7999);
    ck_assert_int_eq(rigmat_load_yaml_text(big, len, "dup.yaml", 1, 1, &opt, &files, &d, &root),
            RIGMAT_EMODEL);
    ck_assert_uint_eq(d.errors, 1);
    ck_assert_uint_eq(d.items[0].where.line, 8000);
    ck_assert_ptr_nonnull(strstr(d.items[0].hint, "line 1,"));
    rigmat_node_free(root);
    free(big);
    rigmat_diags_release(&d);
    rigmat_diags_release(&files);
}
END_TEST

START_TEST(file_limits_and_io_errors)
{
    rigmat_options opt = rigmat_options_default();
    rigmat_model *m = NULL;
    rigmat_diags d;
    char *tmp = temp_dir(), path[256];

    rigmat_diags_init(&d);
    ck_assert_int_eq(rigmat_model_load(tmp, NULL, 0, &opt, &m, &d), RIGMAT_EIO);
    ck_assert_ptr_nonnull(strstr(d.items[0].message, "folder"));
    rigmat_diags_release(&d);
    snprintf(path, sizeof path, "%s/none.yaml", tmp);
    rigmat_diags_init(&d);
    ck_assert_int_eq(rigmat_model_load(path, NULL, 0, &opt, &m, &d), RIGMAT_EIO);
    ck_assert_ptr_nonnull(strstr(d.items[0].message, "cannot read"));
    rigmat_diags_release(&d);
    snprintf(path, sizeof path, "%s/big.yaml", tmp);
    write_file(path, "rigmat: 1\nname: a model padded past a tiny limit of 64 bytes ......\n");
    opt.max_file_bytes = 64;
    rigmat_diags_init(&d);
    ck_assert_int_eq(rigmat_model_load(path, NULL, 0, &opt, &m, &d), RIGMAT_EMODEL);
    ck_assert_ptr_nonnull(strstr(d.items[0].message, "larger than the limit of 64 bytes"));
    ck_assert_ptr_null(m);
    rigmat_diags_release(&d);
    remove_tree(tmp);
    free(tmp);
}
END_TEST

/* ------------------------------------------ parts: budget, counts, cache */

/* A temporary project: catalog/p/NAME.yaml holding part, and m.yaml. */
static char *parts_project(const char *name, const char *part, const char *model, char *path,
        size_t len)
{
    char *tmp = temp_dir(), p[512];

    snprintf(p, sizeof p, "%s/catalog", tmp);
    ck_assert_int_eq(mkdir(p, 0700), 0);
    snprintf(p, sizeof p, "%s/catalog/p", tmp);
    ck_assert_int_eq(mkdir(p, 0700), 0);
    snprintf(p, sizeof p, "%s/catalog/p/%s.yaml", tmp, name);
    write_file(p, part);
    snprintf(path, len, "%s/m.yaml", tmp);
    write_file(path, model);
    return tmp;
}

/* Bodies b0 .. b<n-1>, each `{part: p/NAME}`, on lines 3 .. n + 2. */
static void bodies_naming(char *buf, size_t len, size_t n, const char *name)
{
    size_t i, used = (size_t)snprintf(buf, len, "rigmat: 1\nbodies:\n");

    for (i = 0; i < n && used < len; i++)
        used += (size_t)snprintf(buf + used, len - used, "  b%zu: {part: p/%s}\n", i, name);
    ck_assert_uint_lt(used, len);
}

/* The nodes counted by hand: the part "mass: 1 kg\npad: [1, ... 40 ones]"
 * is a mapping (1), mass and its value (2), pad (1), its list (1) and 40
 * values: 45.  The model with five bodies: the root (1), rigmat and 1 (2),
 * bodies (1) and its mapping (1), and per body its name, mapping, `part`
 * and the part's name (4): 25.  Merged: 25 + 45 k after k bodies, so a
 * budget of 200 nodes is passed at the fourth body (205), and one of 205
 * at the fifth. */
START_TEST(parts_share_a_total_budget)
{
    char part[256], model[512], path[512];
    size_t i, used, limit;
    char *tmp;

    used = (size_t)snprintf(part, sizeof part, "mass: 1 kg\npad: [1");
    for (i = 1; i < 40; i++)
        used += (size_t)snprintf(part + used, sizeof part - used, ", 1");
    snprintf(part + used, sizeof part - used, "]\n");
    bodies_naming(model, sizeof model, 5, "slab");
    tmp = parts_project("slab", part, model, path, sizeof path);
    {
        rigmat_options opt = rigmat_options_default();
        rigmat_diags files, d;
        rigmat_node *tree = NULL;
        char p[512];
        rigmat_diags_init(&files);
        rigmat_diags_init(&d);
        snprintf(p, sizeof p, "%s/catalog/p/slab.yaml", tmp);
        ck_assert_int_eq(rigmat_load_yaml_file(p, &opt, &files, &d, &tree), RIGMAT_OK);
        ck_assert_uint_eq(rigmat_node_count(tree), 45);
        rigmat_node_free(tree);
        ck_assert_int_eq(rigmat_load_yaml_file(path, &opt, &files, &d, &tree), RIGMAT_OK);
        ck_assert_uint_eq(rigmat_node_count(tree), 25);
        rigmat_node_free(tree);
        rigmat_diags_release(&d);
        rigmat_diags_release(&files);
    }
    for (limit = 200; limit <= 205; limit += 5) {
        rigmat_options opt = rigmat_options_default();
        rigmat_model *m = NULL;
        rigmat_diags d;
        rigmat_diags_init(&d);
        opt.max_nodes = limit;
        ck_assert_int_eq(rigmat_model_load(path, NULL, 0, &opt, &m, &d), RIGMAT_EMODEL);
        ck_assert_ptr_null(m);
        /* the one error, at the part of the body that crosses the budget:
         * merging stops there, and nothing after it is read */
        ck_assert_uint_eq(d.errors, 1);
        ck_assert_ptr_nonnull(strstr(d.items[0].message, limit == 200 ?
                "has more than 200 values and collections" :
                "has more than 205 values and collections"));
        ck_assert_ptr_nonnull(strstr(d.items[0].hint, "counts in full"));
        ck_assert_uint_eq(d.items[0].where.line, limit == 200 ? 6 : 7);
        ck_assert_uint_eq(d.items[0].where.col, 14);
        rigmat_diags_release(&d);
    }
    remove_tree(tmp);
    free(tmp);
}
END_TEST

/* Bytes: the model's text plus the part's text at each use, against
 * max_file_bytes; a budget of the model and two uses fails at the third. */
START_TEST(parts_share_a_byte_budget)
{
    const char *part = "# a part with a long comment .................................\n"
                       "mass: 1 kg\n";
    char model[512], path[512];
    rigmat_options opt = rigmat_options_default();
    rigmat_model *m = NULL;
    rigmat_diags d;
    char *tmp;

    bodies_naming(model, sizeof model, 4, "wordy");
    tmp = parts_project("wordy", part, model, path, sizeof path);
    opt.max_file_bytes = strlen(model) + 2 * strlen(part);
    rigmat_diags_init(&d);
    ck_assert_int_eq(rigmat_model_load(path, NULL, 0, &opt, &m, &d), RIGMAT_EMODEL);
    ck_assert_uint_eq(d.errors, 1);
    ck_assert_ptr_nonnull(strstr(d.items[0].message, "larger than the limit of"));
    ck_assert_uint_eq(d.items[0].where.line, 5);
    rigmat_diags_release(&d);
    /* one byte more than three uses need: all four cannot fit, the fourth fails */
    opt.max_file_bytes = strlen(model) + 3 * strlen(part) + 1;
    rigmat_diags_init(&d);
    ck_assert_int_eq(rigmat_model_load(path, NULL, 0, &opt, &m, &d), RIGMAT_EMODEL);
    ck_assert_uint_eq(d.errors, 1);
    ck_assert_uint_eq(d.items[0].where.line, 6);
    rigmat_diags_release(&d);
    remove_tree(tmp);
    free(tmp);
}
END_TEST

/* A section over max_entries is refused before any part is read: the part
 * named does not exist, and the count is the only error. */
START_TEST(counts_come_before_parts)
{
    char model[512], path[512];
    rigmat_options opt = rigmat_options_default();
    rigmat_model *m = NULL;
    rigmat_diags d;
    char *tmp;

    bodies_naming(model, sizeof model, 3, "missing");
    tmp = parts_project("other", "mass: 1 kg\n", model, path, sizeof path);
    opt.max_entries = 2;
    rigmat_diags_init(&d);
    ck_assert_int_eq(rigmat_model_load(path, NULL, 0, &opt, &m, &d), RIGMAT_EMODEL);
    ck_assert_uint_eq(d.errors, 1);
    ck_assert_ptr_nonnull(strstr(d.items[0].message, "more than 2 entries in 'bodies'"));
    ck_assert_uint_eq(d.items[0].where.line, 5);
    ck_assert_uint_eq(d.items[0].where.col, 3);
    rigmat_diags_release(&d);
    remove_tree(tmp);
    free(tmp);
}
END_TEST

/* Each part file is read once per load: a part with a syntax error, named
 * by three bodies, gets its error once (it was reported three times when
 * each body read the file again). */
START_TEST(part_parsed_once)
{
    char model[512], path[512];
    rigmat_model *m = NULL;
    rigmat_diags d;
    rigmat_options opt = rigmat_options_default();
    size_t i, at_part = 0;
    char *tmp;

    bodies_naming(model, sizeof model, 3, "broken");
    tmp = parts_project("broken", "mass: [1 kg\n", model, path, sizeof path);
    rigmat_diags_init(&d);
    ck_assert_int_eq(rigmat_model_load(path, NULL, 0, &opt, &m, &d), RIGMAT_EMODEL);
    for (i = 0; i < d.count; i++)
        if (d.items[i].severity == RIGMAT_ERROR && d.items[i].where.file != NULL &&
                strstr(d.items[i].where.file, "broken.yaml") != NULL)
            at_part++;
    ck_assert_uint_eq(at_part, 1);
    rigmat_diags_release(&d);
    remove_tree(tmp);
    free(tmp);
}
END_TEST

/* Twenty bodies sharing one part (one overriding its mass) read as the
 * same keys written inline. */
START_TEST(shared_part_matches_inline)
{
    const char *rod = "mass: 1 kg\ninertia: 0.01 kg*m^2\ncom: [0.25 m, 0]\n";
    char shared[4096], inline_[4096], path[512], path2[512];
    size_t i, u1 = 0, u2 = 0;
    rigmat_options opt = rigmat_options_default();
    rigmat_model *a = NULL, *b = NULL;
    rigmat_diags d;
    char *tmp;

    u1 += (size_t)snprintf(shared, sizeof shared, "rigmat: 1\nbodies:\n");
    u2 += (size_t)snprintf(inline_, sizeof inline_, "rigmat: 1\nbodies:\n");
    for (i = 0; i < 20; i++) {
        u1 += (size_t)snprintf(shared + u1, sizeof shared - u1, "  l%zu: {part: p/rod%s}\n", i,
                i == 7 ? ", mass: 2 kg" : "");
        u2 += (size_t)snprintf(inline_ + u2, sizeof inline_ - u2, "  l%zu: {mass: %s kg, "
                "inertia: 0.01 kg*m^2, com: [0.25 m, 0]}\n", i, i == 7 ? "2" : "1");
    }
    u1 += (size_t)snprintf(shared + u1, sizeof shared - u1, "joints:\n");
    u2 += (size_t)snprintf(inline_ + u2, sizeof inline_ - u2, "joints:\n");
    for (i = 0; i < 20; i++) {
        char j[128], parent[16];
        if (i == 0)
            snprintf(parent, sizeof parent, "ground");
        else
            snprintf(parent, sizeof parent, "l%zu", i - 1);
        snprintf(j, sizeof j, "  j%zu: {type: hinge, parent: %s, child: l%zu, at: [%s m, 0]}\n",
                i, parent, i, i ? "0.5" : "0");
        u1 += (size_t)snprintf(shared + u1, sizeof shared - u1, "%s", j);
        u2 += (size_t)snprintf(inline_ + u2, sizeof inline_ - u2, "%s", j);
    }
    ck_assert_uint_lt(u1, sizeof shared);
    ck_assert_uint_lt(u2, sizeof inline_);
    tmp = parts_project("rod", rod, shared, path, sizeof path);
    snprintf(path2, sizeof path2, "%s/inline.yaml", tmp);
    write_file(path2, inline_);
    rigmat_diags_init(&d);
    ck_assert_int_eq(rigmat_model_load(path, NULL, 0, &opt, &a, &d), RIGMAT_OK);
    ck_assert_int_eq(rigmat_model_load(path2, NULL, 0, &opt, &b, &d), RIGMAT_OK);
    ck_assert_uint_eq(a->nbodies, 21);
    ck_assert_uint_eq(b->nbodies, 21);
    for (i = 1; i < a->nbodies; i++) {
        ck_assert_str_eq(a->bodies[i].name, b->bodies[i].name);
        ck_assert(a->bodies[i].mass_kg == b->bodies[i].mass_kg);
        ck_assert(a->bodies[i].inertia_kgm2 == b->bodies[i].inertia_kgm2);
        ck_assert(a->bodies[i].com_m[0] == b->bodies[i].com_m[0]);
    }
    ck_assert(a->bodies[8].mass_kg == 2.0);
    rigmat_model_free(a);
    rigmat_model_free(b);
    rigmat_diags_release(&d);
    remove_tree(tmp);
    free(tmp);
}
END_TEST

START_TEST(operating_point_and_order_lists)
{
    rigmat_diags d;
    rigmat_model *m = load_text("rigmat: 1\norder: interleaved\nslope: 5 deg\n"
            "bodies:\n  cart: {mass: 0.94 kg}\n  pole: {mass: 0.21 kg, shape: {rod: "
            "{length: 0.62 m}}}\njoints:\n  track: {type: slider, parent: ground, child: cart}\n"
            "  pivot: {type: hinge, parent: cart, child: pole}\nforces:\n"
            "  push: {across: track, role: input}\noperating_point:\n"
            "  coordinates: {pivot: 3 deg, track: 61 mm}\n  rates: {track: 0.5 m/s}\n"
            "  inputs: {push: 2.7 N}\n  solve: [pivot, push, track.velocity]\n"
            "outputs: []\n", &d, RIGMAT_OK);
    ck_assert_int_eq(m->order_interleaved, 1);
    ck_assert_rel(m->slope_rad, 5.0 * PI / 180.0, 1e-15);
    ck_assert_uint_eq(m->nop_coordinates, 2);
    ck_assert_rel(m->op_coordinates[1].value, 0.061, 1e-15);
    ck_assert_rel(m->op_rates[0].value, 0.5, 0.0);
    ck_assert_rel(m->op_inputs[0].value, 2.7, 0.0);
    ck_assert_uint_eq(m->op_solve.count, 3);
    ck_assert_str_eq(m->op_solve.names[2], "track.velocity");
    ck_assert_uint_eq(m->op_solve.locs[0].line, 16);
    rigmat_model_free(m);
    rigmat_diags_release(&d);
}
END_TEST

/* registered by the Makefile from the line below (build/suites.h) */

/* ---------------------------------------------------------------- limits */

/* The arm of tests/models/arm-duty.yaml with --set overrides; its header
 * derives the numbers by hand. */
static rigmat_model *arm(const char *const *sets, size_t nsets, rigmat_status want,
        rigmat_diags *d)
{
    rigmat_model *m = NULL;
    char msg[8192];
    const rigmat_status st = load("models/arm-duty.yaml", sets, nsets, &m, d);

    diags_text(d, msg, sizeof msg);
    ck_assert_msg(st == want, "status %d, want %d\n%s", st, want, msg);
    return m;
}

/* An error in d whose message holds frag. */
static int has_error(const rigmat_diags *d, const char *frag)
{
    size_t i;
    for (i = 0; i < d->count; i++)
        if (d->items[i].severity == RIGMAT_ERROR && strstr(d->items[i].message, frag) != NULL)
            return 1;
    return 0;
}

START_TEST(limits_read_into_the_model_and_the_layout)
{
    static const char *const sets[] = { "motors.sh.limit=[-0.5, 0.9]",
        "motors.sh.current_limit=2.5 A",
        "forces={push: {on: arm, at: [0, -0.4 m], direction: [1, 0], limit: 3 N}}" };
    rigmat_diags d;
    rigmat_model *m = arm(sets, 3, RIGMAT_OK, &d), *plain;
    const rigmat_layout *L = &m->layout;

    ck_assert_int_eq((int)L->nu, 2);
    /* a [low, high] list as written; a scalar v is [-v, v] */
    ck_assert(L->inputs[0].has_limit && L->inputs[1].has_limit);
    ck_assert_rel(L->inputs[0].limit[0], -0.5, 0);
    ck_assert_rel(L->inputs[0].limit[1], 0.9, 0);
    ck_assert_rel(L->inputs[0].current_limit, 2.5, 0);
    ck_assert_rel(L->inputs[1].limit[0], -3.0, 0);
    ck_assert_rel(L->inputs[1].limit[1], 3.0, 0);
    ck_assert_rel(L->inputs[1].current_limit, 0.0, 0);
    rigmat_model_free(m);
    rigmat_diags_release(&d);
    /* a duty drive is limited to [-1, 1] without a `limit` */
    plain = arm(NULL, 0, RIGMAT_OK, &d);
    ck_assert(plain->layout.inputs[0].has_limit);
    ck_assert_rel(plain->layout.inputs[0].limit[0], -1.0, 0);
    ck_assert_rel(plain->layout.inputs[0].limit[1], 1.0, 0);
    rigmat_model_free(plain);
    rigmat_diags_release(&d);
}
END_TEST

/* Each bad limit and the fragment of its error. */
static const struct {
    const char *set;
    const char *frag;
} bad_limits[] = {
    { "motors.sh.limit=[-1, 1.2]", "wider than [-1, 1]" },
    { "motors.sh.limit=[0.5, -0.5]", "holds no value" },
    { "motors.sh.limit=0", "limit must be positive" },
    { "motors.sh.limit=[1, 2, 3]", "expected a list [low, high]" },
    { "motors.sh.current_limit=-2 A", "current_limit" },
    { "forces={gust: {on: arm, role: disturbance, limit: 3 N}}", "not to a disturbance" },
    { "operating_point.inputs.sh=1.5", "operating-point input 'sh' is 1.5, outside its limit" },
};

START_TEST(bad_limits_are_model_errors)
{
    const char *sets[1];
    rigmat_diags d;
    char msg[8192];
    rigmat_model *m;

    sets[0] = bad_limits[_i].set;
    m = arm(sets, 1, RIGMAT_EMODEL, &d);
    ck_assert_ptr_null(m);
    diags_text(&d, msg, sizeof msg);
    ck_assert_msg(has_error(&d, bad_limits[_i].frag), "--set %s: want '%s', got\n%s",
            bad_limits[_i].set, bad_limits[_i].frag, msg);
    rigmat_diags_release(&d);
}
END_TEST

/* The arm case of README.md, "Limits", against the hand-derived
 * values in the model's header (common practice: holding torque
 * g sin(th) (m_arm L/2 + m_bob L) = N Kt i, V = R i at rest). */
START_TEST(arm_limits_at_the_operating_point)
{
    const double tau = 9.80665 * sin(25.0 * M_PI / 180.0) * (0.5 * 0.2 + 1.0 * 0.4);
    const double i_hold = tau / (10 * 0.1), v_hold = 4.0 * i_hold;
    static const char *const six[] = { "motors.sh.supply=6 V" };
    static const char *const two_amp[] = { "motors.sh.current_limit=2 A" };
    rigmat_options opt = rigmat_options_default();
    rigmat_trim_result r;
    rigmat_lti *l = NULL;
    rigmat_error e;
    rigmat_diags d;
    rigmat_model *m;

    /* 24 V: trims, duty V/24 */
    m = arm(NULL, 0, RIGMAT_OK, &d);
    memset(&e, 0, sizeof e);
    ck_assert_int_eq(rigmat_trim_model(m, &opt, &r, &e), RIGMAT_OK);
    ck_assert_rel(r.u[0], v_hold / 24.0, 1e-10);
    rigmat_trim_result_release(&r);
    ck_assert_int_eq(rigmat_linearize(m, &opt, &l, NULL, &e), RIGMAT_OK);
    ck_assert_rel(l->input_current[0], i_hold, 1e-10);
    rigmat_lti_free(l);
    rigmat_model_free(m);
    rigmat_diags_release(&d);
    /* 6 V: the duty V/6 = 1.38 is beyond 1 */
    m = arm(six, 1, RIGMAT_OK, &d);
    ck_assert(v_hold / 6.0 > 1.0);
    memset(&e, 0, sizeof e);
    ck_assert_int_eq(rigmat_trim_model(m, &opt, &r, &e), RIGMAT_ENUMERIC);
    ck_assert_msg(strstr(e.message, "needs duty 1.381 of drive 'sh'; its limit is 1 "
                "(supply 6 V)") != NULL, "%s", e.message);
    ck_assert_msg(strstr(e.hint, "raise the supply") != NULL, "%s", e.hint);
    rigmat_trim_result_release(&r);
    ck_assert_int_eq(rigmat_linearize(m, &opt, &l, NULL, &e), RIGMAT_ENUMERIC);
    ck_assert_ptr_null(l);
    /* check's options: the point is carried, not refused */
    opt.limits_refuse = 0;
    ck_assert_int_eq(rigmat_linearize(m, &opt, &l, NULL, &e), RIGMAT_OK);
    ck_assert_rel(gsl_vector_get(l->u0, 0), v_hold / 6.0, 1e-10);
    rigmat_lti_free(l);
    opt.limits_refuse = 1;
    rigmat_model_free(m);
    rigmat_diags_release(&d);
    /* a 2 A current limit below the 2.07 A the point needs */
    m = arm(two_amp, 1, RIGMAT_OK, &d);
    ck_assert(i_hold > 2.0);
    memset(&e, 0, sizeof e);
    ck_assert_int_eq(rigmat_linearize(m, &opt, &l, NULL, &e), RIGMAT_ENUMERIC);
    ck_assert_msg(strstr(e.message, "needs 2.072 A in motor 'sh'; its current_limit is 2 A") !=
            NULL, "%s", e.message);
    ck_assert_int_eq(rigmat_trim_model(m, &opt, &r, &e), RIGMAT_ENUMERIC);
    rigmat_trim_result_release(&r);
    rigmat_model_free(m);
    rigmat_diags_release(&d);
}
END_TEST

Suite *load_suite(void);
Suite *load_suite(void)
{
    Suite *s = suite_create("load");
    TCase *tc = tcase_create("corpus");
    TCase *ok = tcase_create("valid");
    TCase *set = tcase_create("set");
    TCase *lim = tcase_create("limits");
    const int nbad = (int)count_yaml("bad");
    const int nex = (int)count_yaml("../examples");

    tcase_add_loop_test(tc, bad_model_gets_its_diagnostic, 0, nbad);
    tcase_add_test(tc, corpus_has_forty_models);
    suite_add_tcase(s, tc);
    tcase_add_loop_test(ok, example_loads, 0, nex);
    tcase_add_loop_test(ok, motor_part_loads, 0, (int)count_yaml("../catalog/motors"));
    tcase_add_loop_test(ok, sensor_part_loads, 0, (int)count_yaml("../catalog/sensors"));
    tcase_add_loop_test(ok, wheel_part_loads, 0, (int)count_yaml("../catalog/wheels"));
    tcase_add_test(ok, shapes_give_inertia_about_com);
    tcase_add_test(ok, rod_default_direction_is_up);
    tcase_add_test(ok, datasheet_motor_figures);
    tcase_add_test(ok, datasheet_output_figures_move_to_motor);
    tcase_add_test(ok, datasheet_mismatch_warns);
    tcase_add_test(ok, motor_defaults_and_slider_placement);
    tcase_add_test(ok, several_errors_reported_at_once);
    tcase_add_test(ok, error_count_is_capped);
    tcase_add_test(ok, unknown_key_hint_names_nearest);
    tcase_add_test(ok, distance_is_levenshtein);
    tcase_add_test(ok, operating_point_and_order_lists);
    tcase_add_test(ok, part_keys_are_overridden_by_the_model);
    tcase_add_test(ok, limits_read_into_the_model_and_the_layout);
    tcase_add_loop_test(ok, bad_limits_are_model_errors, 0,
            (int)(sizeof bad_limits / sizeof bad_limits[0]));
    tcase_add_test(ok, arm_limits_at_the_operating_point);
    suite_add_tcase(s, ok);
    tcase_add_test(set, set_overrides_values_and_parts);
    tcase_add_loop_test(set, set_errors_point_at_the_command_line, 0,
            (int)(sizeof bad_sets / sizeof bad_sets[0]));
    tcase_add_test(set, set_creates_missing_keys);
    tcase_add_test(set, plain_number_text_is_its_own_scalar);
    suite_add_tcase(s, set);
    tcase_add_test(lim, part_lookup_order);
    tcase_add_test(lim, part_symlink_cannot_escape);
    tcase_add_test(lim, limits_stop_large_input);
    tcase_add_test(lim, duplicates_in_a_large_mapping);
    tcase_add_test(lim, file_limits_and_io_errors);
    tcase_add_test(lim, parts_share_a_total_budget);
    tcase_add_test(lim, parts_share_a_byte_budget);
    tcase_add_test(lim, counts_come_before_parts);
    tcase_add_test(lim, part_parsed_once);
    tcase_add_test(lim, shared_part_matches_inline);
    suite_add_tcase(s, lim);
    return s;
}
