/* yaml_doc: a YAML document as a small tree of scalars, sequences and maps, each node keeping
 * the line and column where it starts, so every later error can point into the file. */
#ifndef WEFT_YAML_DOC_H
#define WEFT_YAML_DOC_H

#include "diag.h"

typedef enum ynode_kind { YNODE_SCALAR, YNODE_SEQ, YNODE_MAP } ynode_kind;

typedef struct ynode ynode;
struct ynode {
    ynode_kind kind;
    src_mark mark;
    char *text;          /* SCALAR: the value; MAP entries: see keys */
    int quoted;          /* SCALAR: written in quotes (so never a number or boolean) */
    unsigned n;          /* SEQ/MAP: entries */
    ynode **items;       /* SEQ: items; MAP: values */
    ynode **keys;        /* MAP: keys (scalars) */
};

typedef struct ydoc {
    ynode *root;         /* NULL for an empty file */
    char *path;
} ydoc;

/* Parse one YAML document from `path` (or from `text` when it is not NULL, naming it `path`
 * in messages). Anchors/aliases and complex keys are refused; duplicate keys are errors.
 * Returns 0, or -1 with a file:line:column message in d. */
int ydoc_load(ydoc *doc, const char *path, const char *text, diag *d);
void ydoc_free(ydoc *doc);

/* Put `value` under `key` in a map node, replacing (and freeing) a value already there; the
 * map takes ownership of value. Returns 0 or -1 (out of memory). */
int ynode_map_set(ynode *map, const char *key, ynode *value);
/* Take the root out of a document (the caller owns it now) / free a detached node. */
ynode *ydoc_take_root(ydoc *doc);
void ynode_free(ynode *n);
/* Forget where a node came from (line 0): for values that were not read from the file. */
void ynode_unmark(ynode *n);

/* The value under `key` in a map node, or NULL. */
ynode *ynode_get(const ynode *map, const char *key);
const char *ynode_kind_name(ynode_kind kind);

#endif
