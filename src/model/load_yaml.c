/* load_yaml.c - YAML text to a tree of nodes with 1-based places.
 *
 * Method: libyaml's event API (yaml_parser_parse), building the tree with
 * an explicit stack, so a hostile nesting cannot overflow the C stack; the
 * stack is bounded by opt->max_depth anyway.  This is the only file that
 * sees libyaml's convention (1 = success, 0 = failure) and its 0-based
 * marks; mark_loc() converts them exactly once.
 *
 * What YAML allows and schema 1 does not:
 *   - anchors (&name) and aliases (*name), as the README says: an alias
 *     is refused at the first one (refusing it removes the "billion
 *     laughs" blow-up at the root); an anchor without any alias is refused
 *     at its place once the document has been read, so a file that has
 *     both gets the one error at the alias;
 *   - more than one document, keys that are not plain values;
 *   - duplicate keys, which libyaml does not check (YAML 1.2, 2009, section
 *     3.2.1.1: the keys of a mapping are unique; from memory):
 *     found here after each mapping closes, by sorting, so a mapping with
 *     100000 keys costs n log n, not n^2.
 * Limits (rigmat_options): file size, nesting depth, node count.
 */
#include "load.h"
#include "reentrant.h"
#include "sizes.h"

#include <errno.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <yaml.h>

struct frame {
    rigmat_node *node;
    char *key;          /* MAP: the key waiting for its value, or NULL */
    rigmat_loc key_loc;
};

struct builder {
    const char *text;
    size_t len;
    int one_line;     /* no line end (CR or LF) in text: a --set value */
    const char *file; /* interned */
    unsigned long line0, col0;
    const rigmat_options *opt;
    rigmat_diags *d;
    rigmat_node *root;
    struct frame *stack;
    size_t depth, cap;
    size_t nodes;
    int failed;   /* an error that stops the parse */
    char *anchor; /* the first anchor met (refused after the parse), or NULL */
    rigmat_loc anchor_loc;
    int errors;   /* errors that do not stop it (duplicate keys) */
    int nomem;
};

static char *dup_n(const char *s, size_t n)
{
    char *p = malloc(n + 1);
    if (p != NULL) {
        memcpy(p, s, n);
        p[n] = '\0';
    }
    return p;
}

/* libyaml marks are 0-based in line and column, columns in characters
 * (libyaml 0.2.5, yaml.h, yaml_mark_t).  The first line of a --set value starts at
 * the value's column in the argument. */
static rigmat_loc mark_loc(const struct builder *b, yaml_mark_t mk)
{
    rigmat_loc l;

    l.file = b->file;
    if (mk.line > 0 && b->one_line) {
        /* one line (a --set value): libyaml puts the end of input on a
         * line of its own; the end of the argument is the place */
        l.line = b->line0;
        l.col = b->col0 + (unsigned long)b->len;
        return l;
    }
    l.line = (unsigned long)mk.line + b->line0;
    l.col = (unsigned long)mk.column + (mk.line == 0 ? b->col0 : 1);
    return l;
}

/* The place of a byte offset (a reader error carries only the offset):
 * count lines and UTF-8 lead bytes up to it.  CR, LF and CRLF each end a
 * line, as they do for libyaml (YAML 1.1, section 5.4, line breaks). */
static rigmat_loc offset_loc(const struct builder *b, size_t off)
{
    rigmat_loc l;
    size_t i;

    l.file = b->file;
    l.line = b->line0;
    l.col = b->col0;
    if (off > b->len)
        off = b->len;
    for (i = 0; i < off; i++) {
        const unsigned char c = (unsigned char)b->text[i];
        if (c == '\n' || (c == '\r' && (i + 1 >= b->len || b->text[i + 1] != '\n'))) {
            l.line++;
            l.col = 1;
        } else if (c == '\r') {
            /* the CR of a CRLF: the LF ends the line */
        } else if ((c & 0xC0) != 0x80) {
            l.col++;
        }
    }
    return l;
}

static const rigmat_loc no_loc = { NULL, 0, 0 };

static void fail_at(struct builder *b, rigmat_loc where, const char *hint, const char *fmt, ...)
        RIGMAT_PRINTF(4, 5);
static void fail_at(struct builder *b, rigmat_loc where, const char *hint, const char *fmt, ...)
{
    char buf[256];
    va_list ap;

    va_start(ap, fmt);
    vsnprintf(buf, sizeof buf, fmt, ap);
    va_end(ap);
    if (rigmat_diags_add(b->d, RIGMAT_ERROR, where, no_loc, NULL, hint, "%s", buf) != RIGMAT_OK)
        b->nomem = 1;
    b->failed = 1;
}

/* Remember the first anchor (refused once the document is read). */
static void note_anchor(struct builder *b, const yaml_char_t *anchor, yaml_mark_t mark)
{
    size_t n;

    if (anchor == NULL || b->anchor != NULL)
        return;
    n = strlen((const char *)anchor) + 1;
    b->anchor = malloc(n);
    if (b->anchor == NULL) {
        b->nomem = 1;
        return;
    }
    memcpy(b->anchor, anchor, n);
    b->anchor_loc = mark_loc(b, mark);
}

rigmat_node *rigmat_node_scalar(const char *text, rigmat_loc loc)
{
    rigmat_node *n = calloc(1, sizeof *n);

    if (n == NULL)
        return NULL;
    n->type = RIGMAT_NODE_SCALAR;
    n->loc = loc;
    n->plain = 1;
    n->text = dup_n(text, strlen(text));
    if (n->text == NULL) {
        free(n);
        return NULL;
    }
    return n;
}

rigmat_node *rigmat_node_map(rigmat_loc loc)
{
    rigmat_node *n = calloc(1, sizeof *n);

    if (n != NULL) {
        n->type = RIGMAT_NODE_MAP;
        n->loc = loc;
    }
    return n;
}

void rigmat_node_free(rigmat_node *n)
{
    size_t i;

    if (n == NULL)
        return;
    if (n->type == RIGMAT_NODE_SEQ)
        for (i = 0; i < n->n; i++)
            rigmat_node_free(n->items[i]);
    if (n->type == RIGMAT_NODE_MAP)
        for (i = 0; i < n->n; i++) {
            free(n->entries[i].key);
            rigmat_node_free(n->entries[i].value);
        }
    free(n->items);
    free(n->entries);
    free(n->text);
    free(n);
}

static int grow(void **p, size_t *cap, size_t need, size_t size)
{
    size_t c, bytes;
    void *q;

    if (need <= *cap)
        return 1;
    c = *cap ? *cap : 4;
    while (c < need)
        if (rigmat_size_mul(c, 2, &c) != 0)
            return 0;
    if (rigmat_size_mul(c, size, &bytes) != 0)
        return 0;
    q = realloc(*p, bytes);
    if (q == NULL)
        return 0;
    *p = q;
    *cap = c;
    return 1;
}

static rigmat_status map_add_owned(rigmat_node *map, char *key, rigmat_loc key_loc,
        rigmat_node *value)
{
    void *p = map->entries;

    if (!grow(&p, &map->cap, map->n + 1, sizeof *map->entries)) {
        free(key);
        rigmat_node_free(value);
        return RIGMAT_ENOMEM;
    }
    map->entries = p;
    map->entries[map->n].key = key;
    map->entries[map->n].key_loc = key_loc;
    map->entries[map->n].value = value;
    map->n++;
    return RIGMAT_OK;
}

rigmat_status rigmat_node_map_add(rigmat_node *map, const char *key, rigmat_loc key_loc,
        rigmat_node *value)
{
    char *k = dup_n(key, strlen(key));

    if (k == NULL) {
        rigmat_node_free(value);
        return RIGMAT_ENOMEM;
    }
    return map_add_owned(map, k, key_loc, value);
}

static rigmat_status seq_add(rigmat_node *seq, rigmat_node *value)
{
    void *p = seq->items;

    if (!grow(&p, &seq->cap, seq->n + 1, sizeof *seq->items)) {
        rigmat_node_free(value);
        return RIGMAT_ENOMEM;
    }
    seq->items = p;
    seq->items[seq->n++] = value;
    return RIGMAT_OK;
}

/* Recursion depth is that of the tree, which the parser bounded by
 * max_depth (and --set values by the same limit). */
rigmat_node *rigmat_node_copy(const rigmat_node *n)
{
    rigmat_node *c;
    size_t i;

    if (n == NULL)
        return NULL;
    c = calloc(1, sizeof *c);
    if (c == NULL)
        return NULL;
    c->type = n->type;
    c->loc = n->loc;
    c->plain = n->plain;
    if (n->text != NULL && (c->text = dup_n(n->text, strlen(n->text))) == NULL)
        goto fail;
    for (i = 0; i < n->n; i++) {
        rigmat_node *v;
        if (n->type == RIGMAT_NODE_SEQ) {
            v = rigmat_node_copy(n->items[i]);
            if (v == NULL || seq_add(c, v) != RIGMAT_OK)
                goto fail;
        } else if (n->type == RIGMAT_NODE_MAP) {
            v = rigmat_node_copy(n->entries[i].value);
            if (v == NULL || rigmat_node_map_add(c, n->entries[i].key, n->entries[i].key_loc,
                                     v) != RIGMAT_OK)
                goto fail;
        }
    }
    return c;
fail:
    rigmat_node_free(c);
    return NULL;
}

/* Recursion depth is that of the tree, bounded as above. */
size_t rigmat_node_count(const rigmat_node *n)
{
    size_t i, c = 1;

    if (n == NULL)
        return 0;
    for (i = 0; i < n->n; i++) {
        if (n->type == RIGMAT_NODE_SEQ)
            c += rigmat_node_count(n->items[i]);
        else if (n->type == RIGMAT_NODE_MAP)
            c += 1 + rigmat_node_count(n->entries[i].value);
    }
    return c;
}

rigmat_entry *rigmat_node_get(const rigmat_node *n, const char *key)
{
    size_t i;

    if (n == NULL || n->type != RIGMAT_NODE_MAP)
        return NULL;
    for (i = 0; i < n->n; i++)
        if (strcmp(n->entries[i].key, key) == 0)
            return &n->entries[i];
    return NULL;
}

const char *rigmat_node_type_words(rigmat_node_type t)
{
    switch (t) {
    case RIGMAT_NODE_SCALAR: return "a value";
    case RIGMAT_NODE_SEQ: return "a list";
    case RIGMAT_NODE_MAP: return "a mapping";
    }
    return "a node";
}

size_t rigmat_load_distance(const char *a, const char *b, size_t cap)
{
    /* Wagner and Fischer (1974) with two rows; names are short, and longer
     * ones are not worth a hint */
    size_t row0[33], row1[33], i, j;
    const size_t la = strlen(a), lb = strlen(b);

    if (la > 32 || lb > 32)
        return cap;
    for (j = 0; j <= lb; j++)
        row0[j] = j;
    for (i = 1; i <= la; i++) {
        row1[0] = i;
        for (j = 1; j <= lb; j++) {
            size_t best = row0[j - 1] + (a[i - 1] != b[j - 1]);
            if (row0[j] + 1 < best)
                best = row0[j] + 1;
            if (row1[j - 1] + 1 < best)
                best = row1[j - 1] + 1;
            row1[j] = best;
        }
        memcpy(row0, row1, (lb + 1) * sizeof row0[0]);
    }
    return row0[lb] < cap ? row0[lb] : cap;
}

/* qsort context cannot be passed in C99: sort pointers to the entries. */
static int cmp_entry(const void *x, const void *y)
{
    const rigmat_entry *const *a = x, *const *b = y;
    const int c = strcmp((*a)->key, (*b)->key);

    if (c != 0)
        return c;
    return (*a < *b) ? -1 : (*a > *b);
}

static void check_duplicates(struct builder *b, const rigmat_node *map)
{
    rigmat_entry **v;
    size_t i;

    if (map->n < 2)
        return;
    v = malloc(rigmat_size_mul_add(map->n, sizeof *v, 0));
    if (v == NULL) {
        b->nomem = 1;
        b->failed = 1;
        return;
    }
    for (i = 0; i < map->n; i++)
        v[i] = &map->entries[i];
    qsort(v, map->n, sizeof *v, cmp_entry);
    for (i = 1; i < map->n; i++) {
        size_t first = i - 1;
        char hint[96];
        if (strcmp(v[i]->key, v[first]->key) != 0)
            continue;
        while (first > 0 && strcmp(v[first - 1]->key, v[i]->key) == 0)
            first--;
        snprintf(hint, sizeof hint, "first given at line %lu, column %lu", v[first]->key_loc.line,
                v[first]->key_loc.col);
        if (rigmat_diags_add(b->d, RIGMAT_ERROR, v[i]->key_loc, no_loc, NULL, hint,
                    "duplicate key '%s'", v[i]->key) != RIGMAT_OK)
            b->nomem = 1;
        b->errors++;
    }
    free(v);
}

/* Attach a finished node (or a collection just opened) to the parent. */
static void attach(struct builder *b, rigmat_node *n)
{
    struct frame *top;

    if (b->depth == 0) {
        if (b->root != NULL) {
            rigmat_node_free(n);
            return;
        }
        b->root = n;
        return;
    }
    top = &b->stack[b->depth - 1];
    if (top->node->type == RIGMAT_NODE_SEQ) {
        if (seq_add(top->node, n) != RIGMAT_OK)
            b->nomem = b->failed = 1;
        return;
    }
    if (map_add_owned(top->node, top->key, top->key_loc, n) != RIGMAT_OK)
        b->nomem = b->failed = 1;
    top->key = NULL;
}

/* True when the next node is a key of the mapping on top of the stack. */
static int expecting_key(const struct builder *b)
{
    return b->depth > 0 && b->stack[b->depth - 1].node->type == RIGMAT_NODE_MAP &&
            b->stack[b->depth - 1].key == NULL;
}

static int count_node(struct builder *b, rigmat_loc where)
{
    char msg[96];

    if (++b->nodes <= b->opt->max_nodes)
        return 1;
    snprintf(msg, sizeof msg, "the model has more than %zu values and collections",
            b->opt->max_nodes);
    fail_at(b, where, "a model this large is not a mechanism; split it or raise the limit", "%s",
            msg);
    return 0;
}

static void on_scalar(struct builder *b, const yaml_event_t *ev)
{
    const rigmat_loc where = mark_loc(b, ev->start_mark);
    const char *text = (const char *)ev->data.scalar.value;
    const size_t len = ev->data.scalar.length;
    rigmat_node *n;

    if (memchr(text, '\0', len) != NULL) {
        fail_at(b, where, NULL, "%s", "a value may not contain a NUL character");
        return;
    }
    if (!count_node(b, where))
        return;
    if (expecting_key(b)) {
        struct frame *top = &b->stack[b->depth - 1];
        top->key = dup_n(text, len);
        top->key_loc = where;
        if (top->key == NULL)
            b->nomem = b->failed = 1;
        return;
    }
    n = calloc(1, sizeof *n);
    if (n == NULL || (n->text = dup_n(text, len)) == NULL) {
        free(n);
        b->nomem = b->failed = 1;
        return;
    }
    n->type = RIGMAT_NODE_SCALAR;
    n->loc = where;
    n->plain = ev->data.scalar.style == YAML_PLAIN_SCALAR_STYLE;
    attach(b, n);
}

static void on_open(struct builder *b, const yaml_event_t *ev, rigmat_node_type t)
{
    const rigmat_loc where = mark_loc(b, ev->start_mark);
    rigmat_node *n;
    void *p;
    char msg[80];

    if (expecting_key(b)) {
        fail_at(b, where, "write keys as plain names: 'mass: 0.31 kg'", "%s",
                "a key must be a plain name, not a list or mapping");
        return;
    }
    if (b->depth >= b->opt->max_depth) {
        snprintf(msg, sizeof msg, "nesting deeper than %zu levels", b->opt->max_depth);
        fail_at(b, where, "a model needs a few levels; this file is probably generated wrongly",
                "%s", msg);
        return;
    }
    if (!count_node(b, where))
        return;
    n = calloc(1, sizeof *n);
    p = b->stack;
    if (n == NULL || !grow(&p, &b->cap, b->depth + 1, sizeof *b->stack)) {
        free(n);
        b->nomem = b->failed = 1;
        return;
    }
    b->stack = p;
    n->type = t;
    n->loc = where;
    attach(b, n);
    if (b->failed)
        return;
    b->stack[b->depth].node = n;
    b->stack[b->depth].key = NULL;
    b->depth++;
}

static void on_close(struct builder *b)
{
    struct frame *top;

    if (b->depth == 0)
        return;
    top = &b->stack[b->depth - 1];
    if (top->node->type == RIGMAT_NODE_MAP)
        check_duplicates(b, top->node);
    free(top->key);
    top->key = NULL;
    b->depth--;
}

/* libyaml's "while parsing a block mapping" names the enclosing construct;
 * the note reads better as "in a block mapping". */
static const char *context_words(const char *ctx)
{
    static const char prefix[] = "while parsing ";

    if (ctx != NULL && strncmp(ctx, prefix, sizeof prefix - 1) == 0)
        return ctx + sizeof prefix - 1;
    return ctx;
}

static void parser_error(struct builder *b, const yaml_parser_t *p)
{
    rigmat_loc where, within = no_loc;
    char msg[200];
    const char *what = NULL;

    if (p->error == YAML_MEMORY_ERROR) {
        b->nomem = b->failed = 1;
        return;
    }
    if (p->error == YAML_READER_ERROR) {
        where = offset_loc(b, p->problem_offset);
        if (p->problem_value >= 0)
            snprintf(msg, sizeof msg, "not valid text: %s (byte 0x%02x)",
                    p->problem ? p->problem : "unreadable input", (unsigned)p->problem_value);
        else
            snprintf(msg, sizeof msg, "not valid text: %s",
                    p->problem ? p->problem : "unreadable input");
        fail_at(b, where, "a model file is UTF-8 text", "%s", msg);
        return;
    }
    where = mark_loc(b, p->problem_mark);
    if (p->context != NULL) {
        within = mark_loc(b, p->context_mark);
        what = context_words(p->context);
    }
    snprintf(msg, sizeof msg, "not valid YAML: %s", p->problem ? p->problem : "syntax error");
    if (rigmat_diags_add(b->d, RIGMAT_ERROR, where, within, what, NULL, "%s", msg) != RIGMAT_OK)
        b->nomem = 1;
    b->failed = 1;
}

rigmat_status rigmat_load_yaml_text(const char *text, size_t len, const char *file,
        unsigned long first_line, unsigned long first_col, const rigmat_options *opt,
        rigmat_diags *files, rigmat_diags *d, rigmat_node **out)
{
    struct builder b;
    yaml_parser_t p;
    yaml_event_t ev;
    int done = 0, docs = 0;
    size_t i;

    *out = NULL;
    memset(&b, 0, sizeof b);
    b.text = text;
    b.len = len;
    /* once, not per mark: a scan per scalar is quadratic in the file size */
    b.one_line = len == 0 ||
            (memchr(text, '\n', len) == NULL && memchr(text, '\r', len) == NULL);
    b.file = rigmat_diags_file(files, file);
    b.line0 = first_line;
    b.col0 = first_col;
    b.opt = opt;
    b.d = d;
    if (b.file == NULL || !yaml_parser_initialize(&p))
        return RIGMAT_ENOMEM;
    yaml_parser_set_input_string(&p, (const unsigned char *)text, len);
    while (!done && !b.failed) {
        if (!yaml_parser_parse(&p, &ev)) {
            parser_error(&b, &p);
            break;
        }
        switch (ev.type) {
        case YAML_DOCUMENT_START_EVENT:
            if (++docs > 1)
                fail_at(&b, mark_loc(&b, ev.start_mark),
                        "put one model in each file; remove the '---' line", "%s",
                        "a second YAML document: a model file holds one");
            break;
        case YAML_ALIAS_EVENT:
            fail_at(&b, mark_loc(&b, ev.start_mark),
                    "write the value out in full: anchors and aliases are not part of schema 1",
                    "alias '*%s' refused", (const char *)ev.data.alias.anchor);
            break;
        case YAML_SCALAR_EVENT:
            note_anchor(&b, ev.data.scalar.anchor, ev.start_mark);
            on_scalar(&b, &ev);
            break;
        case YAML_SEQUENCE_START_EVENT:
            note_anchor(&b, ev.data.sequence_start.anchor, ev.start_mark);
            on_open(&b, &ev, RIGMAT_NODE_SEQ);
            break;
        case YAML_MAPPING_START_EVENT:
            note_anchor(&b, ev.data.mapping_start.anchor, ev.start_mark);
            on_open(&b, &ev, RIGMAT_NODE_MAP);
            break;
        case YAML_SEQUENCE_END_EVENT:
        case YAML_MAPPING_END_EVENT:
            on_close(&b);
            break;
        case YAML_STREAM_END_EVENT:
            done = 1;
            break;
        case YAML_NO_EVENT:
        case YAML_STREAM_START_EVENT:
        case YAML_DOCUMENT_END_EVENT:
            break;
        }
        yaml_event_delete(&ev);
    }
    yaml_parser_delete(&p);
    if (b.anchor != NULL && !b.failed && !b.nomem)
        fail_at(&b, b.anchor_loc,
                "write the value out in full: anchors and aliases are not part of schema 1",
                "anchor '&%s' refused", b.anchor);
    free(b.anchor);
    for (i = 0; i < b.depth; i++)
        free(b.stack[i].key);
    free(b.stack);
    if (b.nomem) {
        rigmat_node_free(b.root);
        return RIGMAT_ENOMEM;
    }
    if (b.failed) {
        rigmat_node_free(b.root);
        return RIGMAT_EMODEL;
    }
    *out = b.root;
    return b.errors ? RIGMAT_EMODEL : RIGMAT_OK;
}

rigmat_status rigmat_load_yaml_file(const char *path, const rigmat_options *opt,
        rigmat_diags *files, rigmat_diags *d, rigmat_node **out)
{
    return rigmat_load_yaml_file_sized(path, opt, files, d, out, NULL);
}

rigmat_status rigmat_load_yaml_file_sized(const char *path, const rigmat_options *opt,
        rigmat_diags *files, rigmat_diags *d, rigmat_node **out, size_t *bytes)
{
    const rigmat_loc at = { path, 0, 0 };
    char why[RIGMAT_STRERROR_LEN];
    struct stat sb;
    FILE *f;
    char *buf;
    size_t len = 0, cap = 65536;
    rigmat_status st;

    *out = NULL;
    if (bytes != NULL)
        *bytes = 0;
    if (stat(path, &sb) != 0) {
        rigmat_diags_add(d, RIGMAT_ERROR, at, no_loc, NULL, NULL, "cannot read the model: %s",
                rigmat_strerror(errno, why, sizeof why));
        return RIGMAT_EIO;
    }
    if (S_ISDIR(sb.st_mode)) {
        rigmat_diags_add(d, RIGMAT_ERROR, at, no_loc, NULL, "name a .yaml file inside it",
                "%s", "this is a folder, not a model file");
        return RIGMAT_EIO;
    }
    f = fopen(path, "rb");
    if (f == NULL) {
        rigmat_diags_add(d, RIGMAT_ERROR, at, no_loc, NULL, NULL, "cannot read the model: %s",
                rigmat_strerror(errno, why, sizeof why));
        return RIGMAT_EIO;
    }
    /* Read in chunks rather than trusting st_size: a pipe or a file that
     * grows must still stop at the limit. */
    buf = malloc(cap);
    while (buf != NULL) {
        size_t got;
        if (len == cap) {
            char *g;
            if (cap > opt->max_file_bytes)
                break;
            g = realloc(buf, rigmat_size_mul_add(cap, 2, 0));
            if (g == NULL) {
                free(buf);
                buf = NULL;
                break;
            }
            buf = g;
            cap *= 2;
        }
        got = fread(buf + len, 1, cap - len, f);
        len += got;
        if (got == 0 || len > opt->max_file_bytes)
            break;
    }
    if (buf == NULL) {
        fclose(f);
        return RIGMAT_ENOMEM;
    }
    if (ferror(f)) {
        rigmat_diags_add(d, RIGMAT_ERROR, at, no_loc, NULL, NULL, "cannot read the model: %s",
                rigmat_strerror(errno, why, sizeof why));
        fclose(f);
        free(buf);
        return RIGMAT_EIO;
    }
    fclose(f);
    if (len > opt->max_file_bytes) {
        rigmat_diags_add(d, RIGMAT_ERROR, at, no_loc, NULL,
                "a model is a few kilobytes; raise max_file_bytes if this one is real",
                "the file is larger than the limit of %zu bytes", opt->max_file_bytes);
        free(buf);
        return RIGMAT_EMODEL;
    }
    if (bytes != NULL)
        *bytes = len;
    st = rigmat_load_yaml_text(buf, len, path, 1, 1, opt, files, d, out);
    free(buf);
    return st;
}
