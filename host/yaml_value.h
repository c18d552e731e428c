/* yaml_value: reading typed values out of marked YAML nodes, with errors that point at them. */
#ifndef WEFT_YAML_VALUE_H
#define WEFT_YAML_VALUE_H

#include "yaml_doc.h"

/* Each returns 0, or -1 with "file:line:col: <what> must be ..., not '...'" in d. */
int yval_number(const ydoc *doc, const ynode *n, const char *what, double *out, diag *d);
int yval_integer(const ydoc *doc, const ynode *n, const char *what, long long *out, diag *d);
int yval_bool(const ydoc *doc, const ynode *n, const char *what, int *out, diag *d);
int yval_string(const ydoc *doc, const ynode *n, const char *what, const char **out, diag *d);
int yval_expect(const ydoc *doc, const ynode *n, ynode_kind kind, const char *what, diag *d);

/* Refuse keys of `map` not in the NULL-terminated `allowed`, suggesting the nearest one. */
int yval_check_keys(const ydoc *doc, const ynode *map, const char *const *allowed,
                    const char *where, diag *d);

/* The closest of `names` to `word` within a small edit distance, or NULL. */
const char *yval_nearest(const char *word, const char *const *names, unsigned n_names);

#endif
