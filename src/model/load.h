/* load.h - the model loader's internal interface.
 *
 * Loading runs in four steps, each in its own file:
 *   load_yaml.c  file -> a generic tree of nodes (libyaml's event API), with
 *                the 1-based line and column of every key and value; the
 *                only file that sees libyaml's 1/0 returns and 0-based marks;
 *                enforces the input limits of rigmat_options;
 *   load_part.c  `part: motors/x` entries merged with their catalog file
 *                (the model's keys override the part's);
 *   load_set.c   --set PATH=VALUE overrides applied to the tree;
 *   load.c       the tree interpreted as schema 1 into a rigmat_model.
 *
 * Every node owns its children and strings.  A loc's file pointer is an
 * interned name owned by the rigmat_diags passed as `files` (the model's
 * owner_diags), so locs stay valid as long as the model.
 */
#ifndef RIGMAT_LOAD_H
#define RIGMAT_LOAD_H

#include "rigmat_internal.h"

typedef enum rigmat_node_type {
    RIGMAT_NODE_SCALAR, RIGMAT_NODE_SEQ, RIGMAT_NODE_MAP
} rigmat_node_type;

typedef struct rigmat_node rigmat_node;

/* One key: value pair of a mapping. */
typedef struct rigmat_entry {
    char *key;          /* owned; never contains NUL */
    rigmat_loc key_loc; /* where the key starts */
    rigmat_node *value; /* owned */
} rigmat_entry;

struct rigmat_node {
    rigmat_node_type type;
    rigmat_loc loc;        /* where the value starts (1-based) */
    char *text;            /* SCALAR: owned, NUL-terminated */
    int plain;             /* SCALAR: written without quotes */
    int broken;            /* MAP: its `part:` could not be merged (reported);
                              the schema reads no fields of it, to spare
                              the user errors that follow from that one */
    rigmat_node **items;   /* SEQ: owned */
    rigmat_entry *entries; /* MAP: owned, in file order */
    size_t n, cap;         /* items or entries */
};

/* Parse a YAML text into a tree.  file is the name for locs (interned in
 * files); first_line and first_col shift every loc (1 and 1 for a file; a
 * --set value is parsed with the column where it starts).  Limits come from
 * opt (depth, node count).  Errors go to d; returns RIGMAT_OK with *out set
 * (NULL for an empty document), RIGMAT_EMODEL, or RIGMAT_ENOMEM. */
rigmat_status rigmat_load_yaml_text(const char *text, size_t len, const char *file,
        unsigned long first_line, unsigned long first_col, const rigmat_options *opt,
        rigmat_diags *files, rigmat_diags *d, rigmat_node **out);

/* Read a whole file (at most opt->max_file_bytes) and parse it as above.
 * RIGMAT_EIO with a diagnostic when it cannot be read (missing, a folder,
 * unreadable); RIGMAT_EMODEL when it is too large or not valid YAML. */
rigmat_status rigmat_load_yaml_file(const char *path, const rigmat_options *opt,
        rigmat_diags *files, rigmat_diags *d, rigmat_node **out);

/* The same, and *bytes (when not NULL) the length of the text read, for the
 * total budget of a model with its parts (load_part.c). */
rigmat_status rigmat_load_yaml_file_sized(const char *path, const rigmat_options *opt,
        rigmat_diags *files, rigmat_diags *d, rigmat_node **out, size_t *bytes);

/* Scalars, collections and keys in a tree, counted as the parser counts
 * them against opt->max_nodes (a key is one more node). */
size_t rigmat_node_count(const rigmat_node *n);

/* Free a tree; NULL does nothing. */
void rigmat_node_free(rigmat_node *n);

/* A new scalar node (text copied), or NULL when out of memory. */
rigmat_node *rigmat_node_scalar(const char *text, rigmat_loc loc);
/* A new empty mapping, or NULL. */
rigmat_node *rigmat_node_map(rigmat_loc loc);
/* Append key: value to a mapping, taking value; RIGMAT_ENOMEM (value freed)
 * when out of memory. */
rigmat_status rigmat_node_map_add(rigmat_node *map, const char *key, rigmat_loc key_loc,
        rigmat_node *value);
/* Deep copy, or NULL when out of memory. */
rigmat_node *rigmat_node_copy(const rigmat_node *n);

/* The entry with this key in a mapping, or NULL (also when n is not a map). */
rigmat_entry *rigmat_node_get(const rigmat_node *n, const char *key);

/* Words for a node type in messages: "a value", "a list", "a mapping". */
const char *rigmat_node_type_words(rigmat_node_type t);

/* Levenshtein distance between a and b, capped at cap (returns cap when
 * the distance is cap or more); for "did you mean" hints. */
size_t rigmat_load_distance(const char *a, const char *b, size_t cap);

/* Check the entry count of every section (bodies, joints, ...) against
 * opt->max_entries and, for joints, opt->max_joints (load.c).  Run before
 * the parts are merged, so that no part is read for a model that is
 * refused anyway.  RIGMAT_OK, RIGMAT_EMODEL (reported) or RIGMAT_ENOMEM. */
rigmat_status rigmat_load_counts(const rigmat_node *root, const rigmat_options *opt,
        rigmat_diags *d);

/* Replace every `part:` entry of the model's sections with the merged part
 * (load_part.c).  model_path is the model file (its folder is searched);
 * model_bytes its length.  Each part file is read and parsed once per call,
 * however many entries name it.  The model with its parts merged has the
 * budget of one file: opt->max_file_bytes and opt->max_nodes, where a part
 * counts in full each time an entry (or another part) names it.  The entry
 * that would pass the budget gets the error, and merging stops there with
 * *stop set (when stop is not NULL): the tree is then half merged and
 * worth no further reading.  RIGMAT_OK, RIGMAT_EMODEL (an entry's part
 * could not be merged: the entry is marked broken, the error reported) or
 * RIGMAT_ENOMEM. */
rigmat_status rigmat_load_parts(rigmat_node *root, const char *model_path, size_t model_bytes,
        const rigmat_options *opt, rigmat_diags *files, rigmat_diags *d, int *stop);

/* Resolve a part name to a file path (malloc'd, caller frees) by the
 * lookup order documented in load_part.c.  model_path may be NULL (no
 * model: the catalog folders alone, see load_part.c).  Returns RIGMAT_OK,
 * or with a message in err: RIGMAT_EUSAGE (not a valid part name),
 * RIGMAT_EIO (no folder holds it; the hint lists every folder searched),
 * RIGMAT_EMODEL (it resolves outside its folder) or RIGMAT_ENOMEM.  A model
 * reports each of these as a model error; `rigmat parts NAME` exits with
 * the status's own code. */
rigmat_status rigmat_load_part_path(const char *name, const char *model_path,
        const rigmat_options *opt, char **path, rigmat_error *err);

/* The folders searched for parts, in order (at most 7; each malloc'd,
 * caller frees each and sets *n).  Folders that do not exist are left out. */
rigmat_status rigmat_load_part_folders(const char *model_path, const rigmat_options *opt,
        char **folders, size_t max, size_t *n);

/* The folders the lookup would search, whether they exist or not, as one
 * comma-separated line in buf (truncated to len), for a hint when none
 * exists. */
void rigmat_load_part_candidates(const char *model_path, const rigmat_options *opt, char *buf,
        size_t len);

/* Apply --set overrides (load_set.c).  Errors are placed at "--set", line =
 * the override's 1-based position, column = the character in it. */
rigmat_status rigmat_load_sets(rigmat_node *root, const char *const *sets, size_t nsets,
        const rigmat_options *opt, rigmat_diags *files, rigmat_diags *d);

/* Interpret a tree (after parts and sets) as schema 1 (load.c).  Fills m,
 * whose file and owner_diags are already set.  Errors go to d. */
rigmat_status rigmat_load_schema(const rigmat_node *root, rigmat_model *m,
        const rigmat_options *opt, rigmat_diags *d);

/* The words that place an operating-point error ("the operating point:
 * ..."), shared with the sweep's fast path (src/study/sweep.c). */
#define RIGMAT_LOAD_OP_WORDS "the operating point"

/* 1 when value (SI) of the operating-point input called name lies outside
 * that control input's `limit` (README.md, "Limits"), with err's message
 * and hint the loader's diagnostic of it; 0 when it holds or there is none. */
int rigmat_load_op_input_outside(const rigmat_model *m, const char *name, double value,
        rigmat_error *err);

/* The SI value an override "operating_point.SECTION.NAME=VALUE" (SECTION
 * coordinates, rates or inputs) gives its setting when m is loaded with
 * it: VALUE parsed as rigmat_load_sets parses it and read by the same
 * function as the schema reads it, so the double is the loader's to the
 * bit.  *which is 0, 1, 2 for the section and name (name_len bytes) the
 * setting's name.  RIGMAT_EMODEL when the override is no such setting or
 * the loader would refuse it (its diagnostics come from a real load);
 * RIGMAT_ENOMEM.  Loads nothing: m supplies the kinds. */
rigmat_status rigmat_load_op_value(const rigmat_model *m, const char *set,
        const rigmat_options *opt, int *which, char *name, size_t name_len, double *value);

/* 1 when s is a text YAML reads as a plain scalar of exactly its own
 * characters and the loader as a number with an optional unit: a digit,
 * or a sign or point before one, first; then only letters, digits, one
 * space at a time (not last) and . + - * / ^ _ ( ) (no ':', '#', quote,
 * comma or bracket).  rigmat_load_op_value takes such a text as that
 * scalar without the parser (tests/check_load.c holds the two equal). */
int rigmat_load_plain_number_text(const char *s);

/* rigmat_model_load's stages before the overrides (read, parse, the entry
 * counts, parts merged), kept for many loads of one file with different
 * overrides: a sweep over a parameter.  rigmat_model_load_from then runs
 * the rest on a copy of the kept tree (the overrides, the schema, the
 * layout), so its model and diagnostics equal rigmat_model_load's with the
 * same overrides (tests/check_sweep.c compares them on every example);
 * only the file and its parts are read once, not per load.  The base must
 * outlive every model loaded from it (their locs name its file strings).
 * rigmat_load_base_new refuses (RIGMAT_EMODEL, RIGMAT_EIO, RIGMAT_ENOMEM)
 * a file with any error before the overrides: load such a file the plain
 * way.  The base is read-only once made: threads may load from it at
 * once. */
typedef struct rigmat_load_base rigmat_load_base;
rigmat_status rigmat_load_base_new(const char *path, const rigmat_options *opt,
        rigmat_load_base **out, rigmat_diags *diags);
void rigmat_load_base_free(rigmat_load_base *b);
rigmat_status rigmat_model_load_from(const rigmat_load_base *b, const char *const *sets,
        size_t nsets, const rigmat_options *opt, rigmat_model **out, rigmat_diags *diags);

#endif /* RIGMAT_LOAD_H */
