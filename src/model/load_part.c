/* load_part.c - catalog parts: `part: motors/gearmotor-24v-27` in an entry
 * of a model section is replaced by the keys of the file
 * <catalog folder>/motors/gearmotor-24v-27.yaml, with the entry's own keys
 * overriding the part's (a whole key's value replaces the part's value; no
 * deep merge, so `shape: {ring: ...}` over a part's disc is a ring, not both).
 *
 * Lookup order, first folder holding NAME.yaml wins:
 *   1. --catalog DIR                      (opt->catalog_dir)
 *   2. $RIGMAT_CATALOG                    (opt->catalog_env; one folder)
 *   3. MODELDIR/catalog                   a project's own catalog beside its models
 *   4. MODELDIR                           parts kept next to the model
 *   5. MODELDIR/../catalog                models in a subfolder of a project that keeps
 *                                         catalog/ at its top (this repository's examples/)
 *   6. EXEDIR/../catalog                  beside the folder of the running program
 *                                         (opt->catalog_exe): build/rigmat finds the
 *                                         repository's catalog/ without an install
 *   7. SHARE/catalog                      the installed catalog (opt->catalog_share)
 * MODELDIR is the folder of the model file.  Without a model (`rigmat
 * parts`) only 1, 2, ./catalog, 6 and 7 are searched: the current folder
 * itself holds anything, not a catalog.  Folders that do not exist, and
 * folders met before (by realpath), are skipped.  README.md ("Rules worth
 * knowing") documents the same order.
 *
 * A part name may not leave its catalog folder: no absolute path, no
 * backslash, no empty, `.` or `..` component, only [A-Za-z0-9._-] in a
 * component; and the file found must resolve (realpath, so symbolic links
 * count) to a place inside the folder it was found in.  A part may name a
 * part itself, up to opt->max_part_depth levels; a part that reaches itself
 * again is an error.
 */
/* realpath() is an XSI function, outside _POSIX_C_SOURCE alone */
#define _XOPEN_SOURCE 700
#include "load.h"

#include <limits.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#define MAX_FOLDERS 7

static const char *const part_sections[] = { "bodies", "joints", "springs", "dampers", "motors",
    "forces", "sensors" };

static char *dup_s(const char *s)
{
    const size_t n = strlen(s) + 1;
    char *p = malloc(n);

    if (p != NULL)
        memcpy(p, s, n);
    return p;
}

static char *join(const char *a, const char *b, const char *c)
{
    const size_t n = strlen(a) + strlen(b) + strlen(c) + 1;
    char *p = malloc(n);

    if (p != NULL)
        snprintf(p, n, "%s%s%s", a, b, c);
    return p;
}

static int is_dir(const char *p)
{
    struct stat sb;
    return stat(p, &sb) == 0 && S_ISDIR(sb.st_mode);
}

static int is_file(const char *p)
{
    struct stat sb;
    return stat(p, &sb) == 0 && S_ISREG(sb.st_mode);
}

/* The model's folder: everything before the last '/', or "." */
static char *model_dir(const char *model_path)
{
    const char *slash = model_path ? strrchr(model_path, '/') : NULL;
    char *p;

    if (slash == NULL)
        return dup_s(".");
    if (slash == model_path)
        return dup_s("/");
    p = malloc((size_t)(slash - model_path) + 1);
    if (p != NULL) {
        memcpy(p, model_path, (size_t)(slash - model_path));
        p[slash - model_path] = '\0';
    }
    return p;
}

static rigmat_status add_folder(char **folders, size_t max, size_t *n, char *cand)
{
    char real_a[PATH_MAX], real_b[PATH_MAX];
    size_t i;

    if (cand == NULL)
        return RIGMAT_ENOMEM;
    if (*n >= max || !is_dir(cand) || realpath(cand, real_a) == NULL) {
        free(cand);
        return RIGMAT_OK;
    }
    for (i = 0; i < *n; i++)
        if (realpath(folders[i], real_b) != NULL && strcmp(real_a, real_b) == 0) {
            free(cand);
            return RIGMAT_OK;
        }
    folders[(*n)++] = cand;
    return RIGMAT_OK;
}

rigmat_status rigmat_load_part_folders(const char *model_path, const rigmat_options *opt,
        char **folders, size_t max, size_t *n)
{
    char *dir = model_dir(model_path);
    rigmat_status st = RIGMAT_OK;

    *n = 0;
    if (dir == NULL)
        return RIGMAT_ENOMEM;
    if (opt->catalog_dir != NULL)
        st = add_folder(folders, max, n, dup_s(opt->catalog_dir));
    if (st == RIGMAT_OK && opt->catalog_env != NULL && opt->catalog_env[0] != '\0')
        st = add_folder(folders, max, n, dup_s(opt->catalog_env));
    if (st == RIGMAT_OK)
        st = add_folder(folders, max, n, join(dir, "/", "catalog"));
    /* without a model the current folder is no catalog, only its catalog/ */
    if (st == RIGMAT_OK && model_path != NULL)
        st = add_folder(folders, max, n, dup_s(dir));
    if (st == RIGMAT_OK && model_path != NULL)
        st = add_folder(folders, max, n, join(dir, "/", "../catalog"));
    if (st == RIGMAT_OK && opt->catalog_exe != NULL)
        st = add_folder(folders, max, n, join(opt->catalog_exe, "/", "../catalog"));
    if (st == RIGMAT_OK && opt->catalog_share != NULL)
        st = add_folder(folders, max, n, join(opt->catalog_share, "/", "catalog"));
    free(dir);
    if (st != RIGMAT_OK) {
        /* out of memory part-way: the caller gets nothing to free (found
         * by tests/oom.c: the folders added before were lost) */
        while (*n > 0)
            free(folders[--*n]);
    }
    return st;
}

void rigmat_load_part_candidates(const char *model_path, const rigmat_options *opt, char *buf,
        size_t len)
{
    const char *dir = model_path != NULL ? "MODELDIR" : ".";
    size_t used = 0;

    if (len == 0)
        return;
    buf[0] = '\0';
#define CAND(cond, a, b)                                                                      \
    if ((cond) && used < len)                                                                 \
        used += (size_t)snprintf(buf + used, len - used, "%s%s%s", used ? ", " : "", (a), (b))
    CAND(opt->catalog_dir != NULL, opt->catalog_dir, "");
    CAND(opt->catalog_env != NULL && opt->catalog_env[0] != '\0', opt->catalog_env, "");
    CAND(1, dir, "/catalog");
    CAND(model_path != NULL, dir, "");
    CAND(model_path != NULL, dir, "/../catalog");
    CAND(opt->catalog_exe != NULL, opt->catalog_exe, "/../catalog");
    CAND(opt->catalog_share != NULL, opt->catalog_share, "/catalog");
#undef CAND
    if (model_path != NULL && used < len)
        (void)snprintf(buf + used, len - used, " (MODELDIR: the model's folder)");
}

/* Check a part name against the rules in the file comment. */
static rigmat_status check_name(const char *name, rigmat_error *err)
{
    const char *p = name, *c;

    if (name[0] == '\0')
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "a part name may not be empty");
    if (name[0] == '/') {
        RIGMAT_FAIL(err, RIGMAT_EUSAGE, "part name '%s' is an absolute path", name);
        rigmat_error_hint(err, "name a part inside a catalog folder, e.g. motors/gearmotor-24v-27");
        return RIGMAT_EUSAGE;
    }
    if (strchr(name, '\\') != NULL) {
        RIGMAT_FAIL(err, RIGMAT_EUSAGE, "part name '%s' contains a backslash", name);
        rigmat_error_hint(err, "separate folders with '/'");
        return RIGMAT_EUSAGE;
    }
    if (strlen(name) > 200)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "part name is longer than 200 characters");
    while (1) {
        const char *end = strchr(p, '/');
        const size_t len = end ? (size_t)(end - p) : strlen(p);
        if (len == 0)
            return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "part name '%s' has an empty component", name);
        if ((len == 1 && p[0] == '.') || (len == 2 && p[0] == '.' && p[1] == '.')) {
            RIGMAT_FAIL(err, RIGMAT_EUSAGE, "part name '%s' leaves the catalog folder", name);
            rigmat_error_hint(err, "'.' and '..' are not allowed in a part name");
            return RIGMAT_EUSAGE;
        }
        for (c = p; c < p + len; c++)
            if (!((*c >= 'a' && *c <= 'z') || (*c >= 'A' && *c <= 'Z') ||
                        (*c >= '0' && *c <= '9') || *c == '_' || *c == '-' || *c == '.'))
                return RIGMAT_FAIL(err, RIGMAT_EUSAGE,
                        "part name '%s' has a character other than letters, digits, '.', '_', "
                        "'-' and '/'", name);
        if (end == NULL)
            break;
        p = end + 1;
    }
    return RIGMAT_OK;
}

rigmat_status rigmat_load_part_path(const char *name, const char *model_path,
        const rigmat_options *opt, char **path, rigmat_error *err)
{
    char *folders[MAX_FOLDERS];
    size_t nf = 0, i, used = 0;
    rigmat_status st;
    char hint[sizeof err->hint];
    const size_t nlen = strlen(name);
    const int has_ext = nlen > 5 && strcmp(name + nlen - 5, ".yaml") == 0;

    *path = NULL;
    st = check_name(name, err);
    if (st != RIGMAT_OK)
        return st;
    st = rigmat_load_part_folders(model_path, opt, folders, MAX_FOLDERS, &nf);
    if (st != RIGMAT_OK)
        return RIGMAT_FAIL(err, st, "out of memory");
    for (i = 0; i < nf && *path == NULL && st == RIGMAT_OK; i++) {
        char *cand = join(folders[i], "/", name);
        char *file = cand ? (has_ext ? dup_s(cand) : join(cand, ".yaml", "")) : NULL;
        char real_dir[PATH_MAX], real_file[PATH_MAX];
        free(cand);
        if (file == NULL) {
            st = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
            break;
        }
        if (is_file(file) && realpath(folders[i], real_dir) != NULL &&
                realpath(file, real_file) != NULL) {
            const size_t dl = strlen(real_dir);
            if (strncmp(real_file, real_dir, dl) == 0 && (real_file[dl] == '/' || dl == 1)) {
                *path = file;
                continue;
            }
            st = RIGMAT_FAIL(err, RIGMAT_EMODEL, "part '%s' resolves outside its catalog folder",
                    name);
            rigmat_error_hint(err, "a symbolic link leads out of '%s'", folders[i]);
        }
        free(file);
    }
    if (*path == NULL && st == RIGMAT_OK) {
        /* every folder searched, in order; a list too long for the hint says
         * how many it leaves out rather than stopping silently */
        hint[0] = '\0';
        for (i = 0; i < nf; i++) {
            const size_t l = strlen(folders[i]);
            if (used + l + 2 + 24 >= sizeof hint) {
                (void)snprintf(hint + used, sizeof hint - used, " and %zu more", nf - i);
                break;
            }
            used += (size_t)snprintf(hint + used, sizeof hint - used, "%s%s", i ? ", " : "",
                    folders[i]);
        }
        st = RIGMAT_FAIL(err, RIGMAT_EIO, "part '%s' not found", name);
        if (nf == 0) {
            rigmat_load_part_candidates(model_path, opt, hint, sizeof hint);
            rigmat_error_hint(err, "no catalog folder exists (looked for %s); give one with "
                    "--catalog DIR", hint);
        } else {
            rigmat_error_hint(err, "looked in %s", hint);
        }
    }
    for (i = 0; i < nf; i++)
        free(folders[i]);
    return st;
}

struct chain {
    char real[PATH_MAX];
    const struct chain *up;
};

static const rigmat_loc no_loc = { NULL, 0, 0 };

static rigmat_status part_error(rigmat_diags *d, rigmat_loc where, const rigmat_error *e)
{
    rigmat_status st = rigmat_diags_add(d, RIGMAT_ERROR, where, no_loc, NULL,
            e->hint[0] ? e->hint : NULL, "%s", e->message);
    return st == RIGMAT_OK ? RIGMAT_EMODEL : st;
}

/* Merge the part named in entry map `m` into it.  depth counts the parts
 * above this one (1 for a part named by the model). */
static rigmat_status resolve(rigmat_node *m, size_t depth, const struct chain *up,
        const char *model_path, const rigmat_options *opt, rigmat_diags *files, rigmat_diags *d)
{
    rigmat_entry *pe = rigmat_node_get(m, "part");
    rigmat_node *tree = NULL;
    rigmat_error e;
    struct chain here;
    const struct chain *c;
    char *path = NULL;
    rigmat_status st;
    size_t i;

    memset(&e, 0, sizeof e);
    if (pe->value->type != RIGMAT_NODE_SCALAR) {
        rigmat_diags_add(d, RIGMAT_ERROR, pe->value->loc, no_loc, NULL,
                "write the part's name, e.g. part: motors/gearmotor-24v-27",
                "expected a part name, got %s", rigmat_node_type_words(pe->value->type));
        return RIGMAT_EMODEL;
    }
    if (depth > opt->max_part_depth) {
        rigmat_diags_add(d, RIGMAT_ERROR, pe->value->loc, no_loc, NULL,
                "a part may build on another, but not this deep",
                "parts nest deeper than %zu levels", opt->max_part_depth);
        return RIGMAT_EMODEL;
    }
    st = rigmat_load_part_path(pe->value->text, model_path, opt, &path, &e);
    if (st != RIGMAT_OK)
        return st == RIGMAT_ENOMEM ? st : part_error(d, pe->value->loc, &e);
    if (realpath(path, here.real) == NULL) {
        free(path);
        rigmat_diags_add(d, RIGMAT_ERROR, pe->value->loc, no_loc, NULL, NULL,
                "part '%s' cannot be read", pe->value->text);
        return RIGMAT_EMODEL;
    }
    here.up = up;
    for (c = up; c != NULL; c = c->up)
        if (strcmp(c->real, here.real) == 0) {
            free(path);
            rigmat_diags_add(d, RIGMAT_ERROR, pe->value->loc, no_loc, NULL,
                    "a part may not build on itself", "part '%s' includes itself",
                    pe->value->text);
            return RIGMAT_EMODEL;
        }
    st = rigmat_load_yaml_file(path, opt, files, d, &tree);
    if (st == RIGMAT_OK && (tree == NULL || tree->type != RIGMAT_NODE_MAP)) {
        const rigmat_loc at = { rigmat_diags_file(files, path), 1, 1 };
        st = rigmat_diags_add(d, RIGMAT_ERROR, tree ? tree->loc : at, pe->value->loc,
                "this part", "a part file is a mapping of the entry's keys, e.g. 'mass: 0.31 kg'",
                "a part file must be a mapping") == RIGMAT_ENOMEM ? RIGMAT_ENOMEM : RIGMAT_EMODEL;
    }
    free(path);
    if (st == RIGMAT_OK && rigmat_node_get(tree, "part") != NULL)
        st = resolve(tree, depth + 1, &here, model_path, opt, files, d);
    if (st != RIGMAT_OK) {
        rigmat_node_free(tree);
        return st == RIGMAT_EIO ? RIGMAT_EMODEL : st;
    }
    /* The entry's own keys win; the part supplies the rest, moved over. */
    for (i = 0; i < tree->n && st == RIGMAT_OK; i++) {
        rigmat_entry *te = &tree->entries[i];
        if (strcmp(te->key, "part") == 0 || rigmat_node_get(m, te->key) != NULL)
            continue;
        st = rigmat_node_map_add(m, te->key, te->key_loc, te->value);
        te->value = NULL;
    }
    rigmat_node_free(tree);
    return st;
}

rigmat_status rigmat_load_parts(rigmat_node *root, const char *model_path,
        const rigmat_options *opt, rigmat_diags *files, rigmat_diags *d)
{
    rigmat_status worst = RIGMAT_OK;
    size_t s, i;

    if (root == NULL || root->type != RIGMAT_NODE_MAP)
        return RIGMAT_OK;
    for (s = 0; s < sizeof part_sections / sizeof part_sections[0]; s++) {
        const rigmat_entry *sec = rigmat_node_get(root, part_sections[s]);
        if (sec == NULL || sec->value->type != RIGMAT_NODE_MAP)
            continue;
        for (i = 0; i < sec->value->n; i++) {
            rigmat_node *m = sec->value->entries[i].value;
            rigmat_status st;
            if (m->type != RIGMAT_NODE_MAP || rigmat_node_get(m, "part") == NULL)
                continue;
            st = resolve(m, 1, NULL, model_path, opt, files, d);
            if (st == RIGMAT_ENOMEM)
                return st;
            if (st != RIGMAT_OK) {
                m->broken = 1;
                worst = RIGMAT_EMODEL;
            }
        }
    }
    return worst;
}
