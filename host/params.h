/* params: a stage's parameter values, checked against the plugin's declarations -- types,
 * ranges, choices, required ones -- from the graph's `params:` map. */
#ifndef WEFT_PARAMS_H
#define WEFT_PARAMS_H

#include <weft/stage.h>

#include "yaml_doc.h"

typedef struct param_set {
    weft_param *items;          /* one per declared parameter, in declaration order */
    src_mark *marks;            /* where each value was written (line 0 if defaulted) */
    uint32_t count;
    weft_params view;           /* what init receives */
} param_set;

/* Resolve `given` (the params map, may be NULL) against `specs`. Errors name the file, line and
 * column, the stage and what would be right. Returns 0 or -1. */
int param_set_resolve(param_set *ps, const weft_param_spec *specs, const ynode *given,
                      const ydoc *doc, const char *stage, diag *d);
void param_set_free(param_set *ps);

/* As param_set_resolve, but a parameter not in `given` keeps its value from `base` (the
 * stage's current set) before falling back to the default: a swap changes only what it says. */
int param_set_resolve_over(param_set *ps, const weft_param_spec *specs, const ynode *given,
                           const ydoc *doc, const char *stage, const param_set *base, diag *d);

/* Replace one value (fit's learned parameters). Type must match the declaration. */
int param_set_number(param_set *ps, const char *name, double v);
int param_set_numbers(param_set *ps, const char *name, const double *v, uint32_t rows,
                      uint32_t cols, int matrix);
int param_set_strings(param_set *ps, const char *name, const char *const *v, uint32_t n);

/* The mark of a parameter's value, or of `fallback` if it was not written. */
src_mark param_set_mark(const param_set *ps, const char *name, src_mark fallback);

/* A parameter's value as graph-file text ("4", "[8, 30]", "[[1, 0], [0, 1]]"), for `weft check`
 * and for writing fitted graphs. Writes at most `size` bytes; returns the full length. */
size_t param_format(const weft_param *p, char *buf, size_t size);

const char *param_type_name(uint32_t type);

#endif
