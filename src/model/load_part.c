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
#include "sizes.h"

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

/* A part file read during this merge: parsed once, copied for each entry
 * that names it. */
struct cached {
    char *real;         /* resolved path: the key */
    rigmat_node *tree;  /* as parsed (its own `part:` not merged); NULL when it failed */
    size_t bytes, nodes;
};

/* One merge: the cache of part files and the running total of the model
 * with its parts merged.  Lives on the caller's stack: no global state, so
 * loads on separate threads stay independent. */
struct merge {
    const char *model_path;
    const rigmat_options *opt;
    rigmat_diags *files, *d;
    struct cached *parts;
    size_t nparts, cap;
    size_t bytes, nodes; /* the model so far: within opt's file limits */
    rigmat_loc top;      /* the `part:` of the model's entry being merged */
    int over;            /* the budget is spent: stop merging */
};

static const rigmat_loc no_loc = { NULL, 0, 0 };

static rigmat_status part_error(rigmat_diags *d, rigmat_loc where, const rigmat_error *e)
{
    rigmat_status st = rigmat_diags_add(d, RIGMAT_ERROR, where, no_loc, NULL,
            e->hint[0] ? e->hint : NULL, "%s", e->message);
    return st == RIGMAT_OK ? RIGMAT_EMODEL : st;
}

/* The part file at path (resolved: real), read and parsed on its first use
 * only.  A file that failed is remembered as failed, so its errors are
 * reported once.  *out is NULL with RIGMAT_ENOMEM. */
static rigmat_status cache_get(struct merge *g, const char *path, const char *real,
        rigmat_loc named_at, const struct cached **out)
{
    struct cached *c;
    rigmat_node *tree = NULL;
    size_t i, bytes = 0;
    rigmat_status st;

    *out = NULL;
    for (i = 0; i < g->nparts; i++)
        if (strcmp(g->parts[i].real, real) == 0) {
            *out = &g->parts[i];
            return RIGMAT_OK;
        }
    if (g->nparts == g->cap) {
        const size_t cap = g->cap ? 2 * g->cap : 8;
        size_t sz;
        void *p;
        if (rigmat_size_mul(cap, sizeof *g->parts, &sz) != 0 ||
                (p = realloc(g->parts, sz)) == NULL)
            return RIGMAT_ENOMEM;
        g->parts = p;
        g->cap = cap;
    }
    st = rigmat_load_yaml_file_sized(path, g->opt, g->files, g->d, &tree, &bytes);
    if (st == RIGMAT_ENOMEM)
        return st;
    if (st == RIGMAT_OK && (tree == NULL || tree->type != RIGMAT_NODE_MAP)) {
        const rigmat_loc at = { rigmat_diags_file(g->files, path), 1, 1 };
        if (rigmat_diags_add(g->d, RIGMAT_ERROR, tree ? tree->loc : at, named_at, "this part",
                    "a part file is a mapping of the entry's keys, e.g. 'mass: 0.31 kg'",
                    "a part file must be a mapping") == RIGMAT_ENOMEM) {
            rigmat_node_free(tree);
            return RIGMAT_ENOMEM;
        }
        st = RIGMAT_EMODEL;
    }
    if (st != RIGMAT_OK) {
        rigmat_node_free(tree);
        tree = NULL;
    }
    c = &g->parts[g->nparts];
    c->real = malloc(strlen(real) + 1);
    if (c->real == NULL) {
        rigmat_node_free(tree);
        return RIGMAT_ENOMEM;
    }
    memcpy(c->real, real, strlen(real) + 1);
    c->tree = tree;
    c->bytes = bytes;
    c->nodes = rigmat_node_count(tree);
    g->nparts++;
    *out = c;
    return RIGMAT_OK;
}

/* Charge one use of part c (named `name`) to the total budget: 1 when it
 * fits, 0 with the error reported at the model's entry (g->top) and
 * g->over set, -1 when out of memory while reporting it. */
static int charge(struct merge *g, const struct cached *c, const char *name)
{
    const rigmat_options *o = g->opt;
    char hint[320];
    rigmat_status st;

    /* g->bytes <= max_file_bytes and g->nodes <= max_nodes hold here, so
     * the differences below cannot wrap */
    if (c->bytes <= o->max_file_bytes - g->bytes && c->nodes <= o->max_nodes - g->nodes) {
        g->bytes += c->bytes;
        g->nodes += c->nodes;
        return 1;
    }
    g->over = 1;
    snprintf(hint, sizeof hint, "part '%.120s' (%zu bytes, %zu values and collections) counts "
            "in full for every entry that names it; the model with its parts merged has the "
            "limits of one file (README.md, Limits)", name, c->bytes, c->nodes);
    if (c->bytes > o->max_file_bytes - g->bytes)
        st = rigmat_diags_add(g->d, RIGMAT_ERROR, g->top, no_loc, NULL, hint,
                "with its parts merged, the model is larger than the limit of %zu bytes",
                o->max_file_bytes);
    else
        st = rigmat_diags_add(g->d, RIGMAT_ERROR, g->top, no_loc, NULL, hint,
                "with its parts merged, the model has more than %zu values and collections",
                o->max_nodes);
    return st == RIGMAT_ENOMEM ? -1 : 0;
}

/* Merge the part named in entry map `m` into it.  depth counts the parts
 * above this one (1 for a part named by the model). */
static rigmat_status resolve(struct merge *g, rigmat_node *m, size_t depth,
        const struct chain *up)
{
    rigmat_entry *pe = rigmat_node_get(m, "part");
    const struct cached *c = NULL;
    rigmat_node *tree = NULL;
    rigmat_error e;
    struct chain here;
    const struct chain *k;
    char *path = NULL;
    rigmat_status st;
    size_t i;
    int fits;

    memset(&e, 0, sizeof e);
    if (pe->value->type != RIGMAT_NODE_SCALAR) {
        rigmat_diags_add(g->d, RIGMAT_ERROR, pe->value->loc, no_loc, NULL,
                "write the part's name, e.g. part: motors/gearmotor-24v-27",
                "expected a part name, got %s", rigmat_node_type_words(pe->value->type));
        return RIGMAT_EMODEL;
    }
    if (depth > g->opt->max_part_depth) {
        rigmat_diags_add(g->d, RIGMAT_ERROR, pe->value->loc, no_loc, NULL,
                "a part may build on another, but not this deep",
                "parts nest deeper than %zu levels", g->opt->max_part_depth);
        return RIGMAT_EMODEL;
    }
    st = rigmat_load_part_path(pe->value->text, g->model_path, g->opt, &path, &e);
    if (st != RIGMAT_OK)
        return st == RIGMAT_ENOMEM ? st : part_error(g->d, pe->value->loc, &e);
    if (realpath(path, here.real) == NULL) {
        free(path);
        rigmat_diags_add(g->d, RIGMAT_ERROR, pe->value->loc, no_loc, NULL, NULL,
                "part '%s' cannot be read", pe->value->text);
        return RIGMAT_EMODEL;
    }
    here.up = up;
    for (k = up; k != NULL; k = k->up)
        if (strcmp(k->real, here.real) == 0) {
            free(path);
            rigmat_diags_add(g->d, RIGMAT_ERROR, pe->value->loc, no_loc, NULL,
                    "a part may not build on itself", "part '%s' includes itself",
                    pe->value->text);
            return RIGMAT_EMODEL;
        }
    st = cache_get(g, path, here.real, pe->value->loc, &c);
    free(path);
    if (st != RIGMAT_OK)
        return st;
    if (c->tree == NULL)
        return RIGMAT_EMODEL; /* reported when it was read */
    fits = charge(g, c, pe->value->text);
    if (fits != 1)
        return fits < 0 ? RIGMAT_ENOMEM : RIGMAT_EMODEL;
    tree = rigmat_node_copy(c->tree);
    c = NULL; /* the nested merge below may move the cache */
    if (tree == NULL)
        return RIGMAT_ENOMEM;
    if (rigmat_node_get(tree, "part") != NULL)
        st = resolve(g, tree, depth + 1, &here);
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

rigmat_status rigmat_load_parts(rigmat_node *root, const char *model_path, size_t model_bytes,
        const rigmat_options *opt, rigmat_diags *files, rigmat_diags *d, int *stop)
{
    rigmat_status worst = RIGMAT_OK;
    struct merge g;
    size_t s, i;

    if (stop != NULL)
        *stop = 0;
    if (root == NULL || root->type != RIGMAT_NODE_MAP)
        return RIGMAT_OK;
    memset(&g, 0, sizeof g);
    g.model_path = model_path;
    g.opt = opt;
    g.files = files;
    g.d = d;
    /* the model file itself, already within these limits */
    g.bytes = model_bytes < opt->max_file_bytes ? model_bytes : opt->max_file_bytes;
    g.nodes = rigmat_node_count(root);
    if (g.nodes > opt->max_nodes)
        g.nodes = opt->max_nodes;
    for (s = 0; s < sizeof part_sections / sizeof part_sections[0] && !g.over; s++) {
        const rigmat_entry *sec = rigmat_node_get(root, part_sections[s]);
        if (sec == NULL || sec->value->type != RIGMAT_NODE_MAP)
            continue;
        for (i = 0; i < sec->value->n && !g.over; i++) {
            rigmat_node *m = sec->value->entries[i].value;
            rigmat_status st;
            if (m->type != RIGMAT_NODE_MAP || rigmat_node_get(m, "part") == NULL)
                continue;
            g.top = rigmat_node_get(m, "part")->value->loc;
            st = resolve(&g, m, 1, NULL);
            if (st == RIGMAT_ENOMEM) {
                worst = st;
                break;
            }
            if (st != RIGMAT_OK) {
                m->broken = 1;
                worst = RIGMAT_EMODEL;
            }
        }
        if (worst == RIGMAT_ENOMEM)
            break;
    }
    for (i = 0; i < g.nparts; i++) {
        free(g.parts[i].real);
        rigmat_node_free(g.parts[i].tree);
    }
    free(g.parts);
    if (stop != NULL && g.over)
        *stop = 1;
    return worst;
}
