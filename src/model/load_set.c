/* load_set.c - --set PATH=VALUE overrides, applied to the tree after the
 * catalog parts are merged (so an override beats a part's value) and
 * before the schema is read (so an override gets the same checks as the
 * file: units, ranges, references).
 *
 * Grammar:
 *   set     := path '=' value
 *   path    := segment { '.' segment }
 *   segment := key { '[' index ']' }      key: [A-Za-z0-9_-]+, index: decimal
 *   value   := a YAML flow value: 2.5ohm, "a b", [0, 0.2 m], {disc: {radius: 61 mm}}
 * Examples: bodies.chassis.mass=4.5kg, bodies.chassis.com[1]=0.2m,
 * motors.drive.resistance=2.5ohm.
 *
 * Missing mapping keys are created, so an override may add a field a part
 * does not have; list elements must exist (a list is replaced whole with
 * `com=[0, 0.2 m]`).  Places: file "--set", line = the override's 1-based
 * position on the command line, column = the character in "PATH=VALUE".
 */
#include "load.h"

#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static const rigmat_loc no_loc = { NULL, 0, 0 };

static int key_char(char c)
{
    return (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || (c >= '0' && c <= '9') ||
            c == '_' || c == '-';
}

/* The bytes of the character at s: a whole UTF-8 sequence when it is one,
 * else the single byte, so a message never shows half a character. */
static size_t char_len(const char *s)
{
    const unsigned char c = (unsigned char)s[0];
    size_t n, i;

    if (c < 0xc2 || c > 0xf4)
        return 1;
    n = c < 0xe0 ? 2 : c < 0xf0 ? 3 : 4;
    for (i = 1; i < n; i++)
        if (((unsigned char)s[i] & 0xc0) != 0x80)
            return 1;
    return n;
}

struct setctx {
    rigmat_diags *d;
    const char *file; /* interned "--set" */
    unsigned long line;
    const char *arg;
};

static rigmat_status set_error(const struct setctx *c, size_t pos, const char *hint,
        const char *fmt, ...) RIGMAT_PRINTF(4, 5);
static rigmat_status set_error(const struct setctx *c, size_t pos, const char *hint,
        const char *fmt, ...)
{
    rigmat_loc at;
    rigmat_status st;
    char buf[256];
    va_list ap;

    va_start(ap, fmt);
    vsnprintf(buf, sizeof buf, fmt, ap);
    va_end(ap);
    at.file = c->file;
    at.line = c->line;
    at.col = (unsigned long)pos + 1;
    st = rigmat_diags_add(c->d, RIGMAT_ERROR, at, no_loc, NULL, hint, "%s", buf);
    return st == RIGMAT_OK ? RIGMAT_EMODEL : st;
}

/* The first mapping key an override created, so a failure further along
 * the path can take it back: a refused override leaves the tree as it was. */
struct created {
    rigmat_node *map;
};

/* One override.  Takes nothing on failure; *made records a key it added. */
static rigmat_status apply_path(rigmat_node *root, const struct setctx *c,
        const rigmat_options *opt, rigmat_diags *files, struct created *made)
{
    const char *arg = c->arg;
    const char *eq = strchr(arg, '=');
    rigmat_node *value = NULL, *node = root;
    rigmat_node **slot = NULL;
    rigmat_status st;
    size_t pos = 0;
    char key[128], shown[200];

    if (eq == NULL)
        return set_error(c, 0, "write it as PATH=VALUE, e.g. bodies.chassis.mass=4.5kg",
                "%s", "expected PATH=VALUE");
    if (eq == arg)
        return set_error(c, 0, "write it as PATH=VALUE, e.g. bodies.chassis.mass=4.5kg",
                "%s", "no path before '='");
    st = rigmat_load_yaml_text(eq + 1, strlen(eq + 1), "--set", c->line,
            (unsigned long)(eq - arg) + 2, opt, files, c->d, &value);
    if (st != RIGMAT_OK) {
        /* a value with errors (a duplicate key) still comes back as a tree */
        rigmat_node_free(value);
        return st;
    }
    if (value == NULL)
        return set_error(c, (size_t)(eq - arg) + 1, "an empty value is not a value; write 0 or "
                "remove the override", "%s", "no value after '='");
    if (root == NULL || root->type != RIGMAT_NODE_MAP) {
        rigmat_node_free(value);
        return RIGMAT_EMODEL; /* the file's own error is reported already */
    }
    while (arg + pos < eq) {
        const size_t start = pos;
        size_t klen = 0;
        rigmat_entry *e;
        while (arg + pos < eq && key_char(arg[pos])) {
            if (klen + 1 < sizeof key)
                key[klen++] = arg[pos];
            pos++;
        }
        key[klen] = '\0';
        if (pos - start >= sizeof key) {
            /* compared whole: a cut key could name another entry */
            rigmat_node_free(value);
            return set_error(c, start, "no key in a model is that long; check the path",
                    "unknown key: a path key of %zu characters (at most %zu)", pos - start,
                    sizeof key - 1);
        }
        if (strcmp(key, "part") == 0) {
            /* parts are merged before overrides run, so a new part would
             * be ignored; and a part name gets its checks in the file */
            rigmat_node_free(value);
            return set_error(c, start, "name the part in the model file, or override the "
                    "part's own keys (motors.drive.resistance=2.5ohm)",
                    "'part' cannot be set from the command line");
        }
        if (klen == 0) {
            rigmat_node_free(value);
            return set_error(c, start, "a path is keys joined by '.', with [i] for a list "
                    "element: bodies.chassis.com[1]", "expected a key in the path%s", "");
        }
        memcpy(shown, arg, start + klen < sizeof shown ? start + klen : sizeof shown - 1);
        shown[start + klen < sizeof shown ? start + klen : sizeof shown - 1] = '\0';
        if (node->type != RIGMAT_NODE_MAP) {
            rigmat_node_free(value);
            return set_error(c, start, NULL, "'%s' is inside a value that is not a mapping",
                    shown);
        }
        e = rigmat_node_get(node, key);
        if (e == NULL) {
            rigmat_loc at;
            rigmat_node *fresh;
            at.file = c->file;
            at.line = c->line;
            at.col = (unsigned long)start + 1;
            if (arg + pos < eq && arg[pos] == '[') {
                rigmat_node_free(value);
                return set_error(c, start, "give the whole list, e.g. com=[0, 0.2 m]",
                        "'%s' does not exist, so it has no elements", shown);
            }
            fresh = (arg + pos == eq) ? value : rigmat_node_map(at);
            if (fresh == NULL) {
                rigmat_node_free(value);
                return RIGMAT_ENOMEM;
            }
            st = rigmat_node_map_add(node, key, at, fresh);
            if (fresh == value)
                return st; /* value taken (or freed on failure) */
            if (st != RIGMAT_OK) {
                rigmat_node_free(value);
                return st;
            }
            if (made->map == NULL)
                made->map = node;
            e = &node->entries[node->n - 1];
        }
        slot = &e->value;
        while (arg + pos < eq && arg[pos] == '[') {
            const size_t ipos = pos;
            size_t idx = 0, digits = 0;
            pos++;
            while (arg + pos < eq && arg[pos] >= '0' && arg[pos] <= '9') {
                if (digits < 9)
                    idx = idx * 10 + (size_t)(arg[pos] - '0');
                digits++;
                pos++;
            }
            if (digits == 0 || digits > 9 || arg + pos >= eq || arg[pos] != ']') {
                rigmat_node_free(value);
                return set_error(c, ipos, "write an element as name[i], i from 0",
                        "%s", "expected [index] with a whole number");
            }
            pos++;
            if ((*slot)->type != RIGMAT_NODE_SEQ) {
                rigmat_node_free(value);
                return set_error(c, ipos, NULL, "'%s' is not a list", shown);
            }
            if (idx >= (*slot)->n) {
                char hint[64];
                snprintf(hint, sizeof hint, "it has %zu element%s, numbered from 0", (*slot)->n,
                        (*slot)->n == 1 ? "" : "s");
                rigmat_node_free(value);
                return set_error(c, ipos, hint, "index out of range in '%s'", shown);
            }
            slot = &(*slot)->items[idx];
        }
        if (arg + pos == eq)
            break;
        if (arg[pos] != '.') {
            rigmat_node_free(value);
            return set_error(c, pos, "a path is keys joined by '.', with [i] for a list "
                    "element: bodies.chassis.com[1]; keys are ASCII letters, digits, '_' and "
                    "'-'", "unexpected '%.*s' in the path", (int)char_len(arg + pos), arg + pos);
        }
        pos++;
        if (arg + pos == eq) {
            rigmat_node_free(value);
            return set_error(c, pos, NULL, "%s", "the path ends with '.'");
        }
        node = *slot;
    }
    rigmat_node_free(*slot);
    *slot = value;
    return RIGMAT_OK;
}

static rigmat_status apply_one(rigmat_node *root, const struct setctx *c,
        const rigmat_options *opt, rigmat_diags *files)
{
    struct created made = { NULL };
    const rigmat_status st = apply_path(root, c, opt, files, &made);

    if (st != RIGMAT_OK && made.map != NULL) {
        /* the key it created first is the map's last entry */
        rigmat_entry *last = &made.map->entries[made.map->n - 1];
        free(last->key);
        rigmat_node_free(last->value);
        made.map->n--;
    }
    return st;
}

rigmat_status rigmat_load_sets(rigmat_node *root, const char *const *sets, size_t nsets,
        const rigmat_options *opt, rigmat_diags *files, rigmat_diags *d)
{
    rigmat_status worst = RIGMAT_OK;
    struct setctx c;
    size_t i;

    c.d = d;
    c.file = rigmat_diags_file(files, "--set");
    if (c.file == NULL)
        return RIGMAT_ENOMEM;
    for (i = 0; i < nsets; i++) {
        rigmat_status st;
        c.line = (unsigned long)i + 1;
        c.arg = sets[i];
        st = apply_one(root, &c, opt, files);
        if (st == RIGMAT_ENOMEM)
            return st;
        if (st != RIGMAT_OK)
            worst = RIGMAT_EMODEL;
    }
    return worst;
}
