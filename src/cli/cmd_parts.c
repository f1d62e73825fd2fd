/* cmd_parts.c - `rigmat parts [NAME]`: the catalog.
 *
 * Without NAME: one line per part found in the catalog folders (the lookup
 * order of src/model/load_part.c without a model: --catalog, $RIGMAT_CATALOG,
 * ./catalog, the catalog beside the program's folder, the installed share
 * folder), its name and the first comment line of its file; a part in an
 * earlier folder hides one of the same name in a later folder, as it does
 * when a model is loaded.
 * With NAME: the part's values after its own `part:` chain is resolved,
 * each as written and in SI.
 * Exit codes (README.md, "Commands"): 0 ok; 1 the part's file (or a part it
 * builds on) is not a valid part; 2 bad usage, including a NAME that is not
 * a part name; 4 the part is in no catalog folder, or no catalog folder
 * exists (the hint lists the folders searched).
 */
#define _XOPEN_SOURCE 700 /* realpath */
#include "cli.h"
#include "sizes.h"
#include "load.h"
#include "units.h"

#include <dirent.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#define MAX_PARTS 2000 /* a catalog is dozens of files; the cap bounds a wrong --catalog */
#define MAX_WALK_DEPTH 4

static const char *const parts_usage[] = { "rigmat parts [NAME] [--catalog DIR] [--format "
        "text|json]", NULL };

struct part_row {
    char *name;
    char *summary;
    char *file;
};

struct part_list {
    struct part_row *rows;
    size_t n, cap;
};

static char *dup_s(const char *s)
{
    const size_t n = strlen(s) + 1;
    char *p = malloc(n);
    if (p != NULL)
        memcpy(p, s, n);
    return p;
}

/* A part's first comment often repeats its file name ("gearmotor-12v-19 --
 * 12 V ..."); the listing already shows the name, so skip that echo. */
static const char *without_own_name(const char *name, const char *summary)
{
    const char *base = strrchr(name, '/');
    size_t n;

    base = base != NULL ? base + 1 : name;
    n = strlen(base);
    if (strncmp(summary, base, n) == 0 && strncmp(summary + n, " -- ", 4) == 0)
        return summary + n + 4;
    return summary;
}

/* The first comment line, without '#' and the blanks after it. */
static char *first_comment(const char *file)
{
    FILE *f = fopen(file, "r");
    char line[512];
    char *out = NULL;

    if (f == NULL)
        return dup_s("");
    while (fgets(line, sizeof line, f) != NULL) {
        char *p = line;
        size_t len;
        while (*p == ' ' || *p == '\t')
            p++;
        if (*p != '#')
            continue;
        p++;
        while (*p == ' ' || *p == '\t')
            p++;
        len = strcspn(p, "\r\n");
        p[len] = '\0';
        out = dup_s(p);
        break;
    }
    fclose(f);
    return out ? out : dup_s("");
}

static int seen(const struct part_list *l, const char *name)
{
    size_t i;
    for (i = 0; i < l->n; i++)
        if (strcmp(l->rows[i].name, name) == 0)
            return 1;
    return 0;
}

/* Whether the real path of path lies inside the folder whose real path is
 * root: a symbolic link out of the catalog (to /etc, or `root -> /`) is not
 * followed. */
static int inside(const char *root, const char *path)
{
    char *real = realpath(path, NULL);
    const size_t n = strlen(root);
    int ok;

    if (real == NULL)
        return 0;
    ok = strncmp(real, root, n) == 0 && (real[n] == '/' || (n == 1 && root[0] == '/'));
    free(real);
    return ok;
}

static rigmat_status walk(struct part_list *l, const char *root, const char *dir,
        const char *prefix, int depth)
{
    DIR *d;
    struct dirent *de;
    rigmat_status st = RIGMAT_OK;

    if (depth > MAX_WALK_DEPTH || (d = opendir(dir)) == NULL)
        return RIGMAT_OK;
    while (st == RIGMAT_OK && l->n < MAX_PARTS && (de = readdir(d)) != NULL) {
        const char *nm = de->d_name;
        const size_t len = strlen(nm);
        char path[4096], name[1024];
        struct stat sb;
        if (nm[0] == '.')
            continue;
        if ((size_t)snprintf(path, sizeof path, "%s/%s", dir, nm) >= sizeof path ||
                (size_t)snprintf(name, sizeof name, "%s%s", prefix, nm) >= sizeof name ||
                stat(path, &sb) != 0 || !inside(root, path))
            continue;
        if (S_ISDIR(sb.st_mode)) {
            char sub[1024];
            if ((size_t)snprintf(sub, sizeof sub, "%s/", name) < sizeof sub)
                st = walk(l, root, path, sub, depth + 1);
            continue;
        }
        if (!S_ISREG(sb.st_mode) || len <= 5 || strcmp(nm + len - 5, ".yaml") != 0)
            continue;
        name[strlen(name) - 5] = '\0';
        if (seen(l, name))
            continue;
        if (l->n == l->cap) {
            const size_t cap = l->cap ? rigmat_size_mul_add(l->cap, 2, 0) : 32;
            struct part_row *g = realloc(l->rows, rigmat_size_mul_add(cap, sizeof *g, 0));
            if (g == NULL) {
                st = RIGMAT_ENOMEM;
                break;
            }
            l->rows = g;
            l->cap = cap;
        }
        l->rows[l->n].name = dup_s(name);
        l->rows[l->n].summary = first_comment(path);
        l->rows[l->n].file = dup_s(path);
        if (l->rows[l->n].name == NULL || l->rows[l->n].summary == NULL ||
                l->rows[l->n].file == NULL) {
            free(l->rows[l->n].name);
            free(l->rows[l->n].summary);
            free(l->rows[l->n].file);
            st = RIGMAT_ENOMEM;
            break;
        }
        l->n++;
    }
    closedir(d);
    return st;
}

static int cmp_row(const void *a, const void *b)
{
    return strcmp(((const struct part_row *)a)->name, ((const struct part_row *)b)->name);
}

static rigmat_status list_parts(struct cli_env *env, const struct cli_common *c)
{
    rigmat_result *r = NULL;
    char *folders[8];
    size_t nf = 0, i;
    struct part_list l = { NULL, 0, 0 };
    rigmat_status st = rigmat_load_part_folders(NULL, &env->opt, folders, 8, &nf);

    for (i = 0; st == RIGMAT_OK && i < nf; i++) {
        char *root = realpath(folders[i], NULL);
        if (root != NULL)
            st = walk(&l, root, folders[i], "", 0);
        free(root);
    }
    if (st == RIGMAT_OK && nf == 0) {
        char where[512];
        rigmat_load_part_candidates(NULL, &env->opt, where, sizeof where);
        fprintf(env->err, "rigmat parts: error: no catalog folder found\n"
                "  hint: looked for %s; give one with --catalog DIR or $RIGMAT_CATALOG\n", where);
        st = RIGMAT_EIO;
    } else if (st == RIGMAT_OK) {
        if (l.n > 1) /* an empty catalog has no rows: qsort(NULL, 0) is undefined */
            qsort(l.rows, l.n, sizeof *l.rows, cmp_row);
        if ((r = rigmat_result_alloc("parts")) == NULL) {
            fprintf(env->err, "rigmat parts: out of memory\n");
            st = RIGMAT_ENOMEM;
        } else {
            size_t w = 0;
            for (i = 0; i < l.n; i++)
                if (strlen(l.rows[i].name) > w)
                    w = strlen(l.rows[i].name);
            rigmat_result_key(r, "folders");
            rigmat_result_array(r);
            for (i = 0; i < nf; i++)
                rigmat_result_string(r, folders[i]);
            rigmat_result_close(r);
            rigmat_result_show(r, RIGMAT_SHOW_JSON);
            rigmat_result_key(r, "parts");
            rigmat_result_array(r);
            for (i = 0; i < l.n; i++) {
                rigmat_result_object(r);
                rigmat_result_key(r, "name");
                rigmat_result_string(r, l.rows[i].name);
                rigmat_result_key(r, "summary");
                rigmat_result_string(r, l.rows[i].summary);
                rigmat_result_key(r, "file");
                rigmat_result_string(r, l.rows[i].file);
                rigmat_result_close(r);
                rigmat_result_as_text(r, "%-*s  %s\n", (int)w, l.rows[i].name,
                        without_own_name(l.rows[i].name, l.rows[i].summary));
            }
            rigmat_result_close(r);
            st = cli_emit(env, r, c, NULL);
        }
    }
    rigmat_result_free(r);
    for (i = 0; i < l.n; i++) {
        free(l.rows[i].name);
        free(l.rows[i].summary);
        free(l.rows[i].file);
    }
    free(l.rows);
    for (i = 0; i < nf; i++)
        free(folders[i]);
    return st;
}

static void text_value(FILE *f, const rigmat_node *n, int depth)
{
    size_t i;

    if (depth > 8) {
        fputs("...", f);
        return;
    }
    switch (n->type) {
    case RIGMAT_NODE_SCALAR:
        fputs(n->text, f);
        break;
    case RIGMAT_NODE_SEQ:
        fputc('[', f);
        for (i = 0; i < n->n; i++) {
            fputs(i ? ", " : "", f);
            text_value(f, n->items[i], depth + 1);
        }
        fputc(']', f);
        break;
    case RIGMAT_NODE_MAP:
        fputc('{', f);
        for (i = 0; i < n->n; i++) {
            fprintf(f, "%s%s: ", i ? ", " : "", n->entries[i].key);
            text_value(f, n->entries[i].value, depth + 1);
        }
        fputc('}', f);
        break;
    }
}

/* A part with its chain resolved: wrap it as the only entry of a section,
 * so load_part.c merges it exactly as for a model. */
static rigmat_status show_part(struct cli_env *env, const char *name, const struct cli_common *c)
{
    rigmat_result *r = NULL;
    rigmat_diags files, d;
    rigmat_error e;
    rigmat_node *root = NULL, *sec = NULL, *ent = NULL, *val = NULL;
    const rigmat_loc at = { "parts", 0, 0 };
    rigmat_status st;
    char *path = NULL;
    size_t i;

    memset(&e, 0, sizeof e);
    rigmat_diags_init(&files);
    rigmat_diags_init(&d);
    st = rigmat_load_part_path(name, NULL, &env->opt, &path, &e);
    if (st != RIGMAT_OK) {
        fprintf(env->err, "rigmat parts: error: %s\n", e.message);
        if (e.hint[0])
            fprintf(env->err, "  hint: %s\n", e.hint);
        goto done;
    }
    root = rigmat_node_map(at);
    sec = rigmat_node_map(at);
    ent = rigmat_node_map(at);
    val = rigmat_node_scalar(name, at);
    st = RIGMAT_ENOMEM;
    if (root == NULL || sec == NULL || ent == NULL || val == NULL ||
            rigmat_node_map_add(ent, "part", at, val) != RIGMAT_OK) {
        rigmat_node_free(sec);
        rigmat_node_free(ent);
        val = NULL;
        goto done;
    }
    if (rigmat_node_map_add(sec, name, at, ent) != RIGMAT_OK) {
        rigmat_node_free(sec);
        goto done;
    }
    if (rigmat_node_map_add(root, "motors", at, sec) != RIGMAT_OK)
        goto done;
    st = rigmat_load_parts(root, NULL, 0, &env->opt, &files, &d, NULL);
    rigmat_diags_print(&d, env->err);
    if (st != RIGMAT_OK)
        goto done;
    r = rigmat_result_alloc("part");
    if (r == NULL) {
        st = RIGMAT_ENOMEM;
        goto done;
    }
    rigmat_result_key(r, "part");
    rigmat_result_string(r, name);
    rigmat_result_as_text(r, "part %s (%s)\n", name, path);
    rigmat_result_key(r, "file");
    rigmat_result_string(r, path);
    rigmat_result_show(r, RIGMAT_SHOW_JSON);
    rigmat_result_key(r, "values");
    rigmat_result_object(r);
    for (i = 0; i < ent->n; i++) {
        const rigmat_entry *en = &ent->entries[i];
        rigmat_quantity q;
        rigmat_error qe;
        char dim[64];
        char *text = NULL;
        size_t tlen = 0;
        FILE *mf;
        int have_si;
        if (strcmp(en->key, "part") == 0)
            continue;
        memset(&qe, 0, sizeof qe);
        have_si = en->value->type == RIGMAT_NODE_SCALAR &&
                rigmat_units_parse(en->value->text, &q, &qe) == RIGMAT_OK;
        dim[0] = '\0';
        if (have_si)
            rigmat_units_format_dim(q.dim, dim, sizeof dim);
        if (strcmp(dim, "1") == 0)
            dim[0] = '\0';
        mf = open_memstream(&text, &tlen);
        if (mf == NULL) {
            st = RIGMAT_ENOMEM;
            goto done;
        }
        text_value(mf, en->value, 0);
        if (fclose(mf) != 0) {
            free(text);
            st = RIGMAT_ENOMEM;
            goto done;
        }
        rigmat_result_key(r, en->key);
        rigmat_result_object(r);
        rigmat_result_key(r, "written");
        rigmat_result_string(r, text);
        if (have_si) {
            rigmat_result_key(r, "si");
            rigmat_result_number(r, q.value, dim);
            rigmat_result_key(r, "unit");
            rigmat_result_string(r, dim);
        }
        rigmat_result_close(r);
        if (have_si)
            rigmat_result_as_text(r, "  %-20s %s  = %.6g%s%s\n", en->key, text, q.value,
                    dim[0] ? " " : "", dim);
        else
            rigmat_result_as_text(r, "  %-20s %s\n", en->key, text);
        free(text);
    }
    rigmat_result_close(r);
    st = cli_emit(env, r, c, NULL);
done:
    rigmat_result_free(r);
    free(path);
    rigmat_node_free(root);
    rigmat_diags_release(&files);
    rigmat_diags_release(&d);
    return st;
}

/* called from the table in main.c */
rigmat_status cmd_parts(int argc, char **argv, struct cli_env *env);
rigmat_status cmd_parts(int argc, char **argv, struct cli_env *env)
{
    struct cli_common c;
    const struct cli_opt opts[] = { { 0, "format", CLI_OPT_STRING, &c.format, "FORMAT",
                                            "output format: text or json" },
        { 0, "catalog", CLI_OPT_STRING, &c.catalog, "DIR", "look for catalog parts in DIR first" },
        { 'h', "help", CLI_OPT_FLAG, &c.help, NULL, "show this help" }, CLI_OPT_END_ROW };
    static const char *const formats[] = { "text", "json", NULL };
    const char *pos[1];
    size_t npos = 0;
    int fmt;
    rigmat_status st;

    memset(&c, 0, sizeof c);
    st = cli_parse(argc, argv, opts, env, pos, 1, &npos);
    if (st != RIGMAT_OK) {
        cli_usage(env->err, parts_usage, opts);
        return st;
    }
    if (c.help) {
        cli_usage(stdout, parts_usage, opts);
        return RIGMAT_OK;
    }
    fmt = cli_format(env, c.format, formats);
    if (fmt < 0)
        return RIGMAT_EUSAGE;
    if (c.catalog != NULL)
        env->opt.catalog_dir = c.catalog;
    cli_catalog_warn(env);
    if (npos == 0)
        return list_parts(env, &c);
    return show_part(env, pos[0], &c);
}
