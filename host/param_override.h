/* param_override: `STAGE.PARAM=VALUE` replacements of a loaded graph's parameters, so one
 * graph can be fitted on a calibration variant of itself (another seed, a bounded number of
 * trials, a recording's path) and written back with its own values. */
#ifndef WEFT_PARAM_OVERRIDE_H
#define WEFT_PARAM_OVERRIDE_H

#include "graph.h"

typedef struct param_override {
    graph *g;
    const ynode **saved;        /* per stage: its params map as loaded */
    ynode **merged;             /* per stage: the map in use while overridden, or NULL */
    ydoc *values;               /* one parsed document per override */
    ynode *keys;                /* one key node per override */
    unsigned n;
} param_override;

/* Parse each "STAGE.PARAM=VALUE" (VALUE is YAML: 11, [8, 30], "text") and put the values in
 * place of the stages' parameters. Returns 0, or -1 with d naming the bad override. */
int param_override_apply(param_override *po, graph *g, char *const *specs, unsigned n,
                         diag *d);

/* Put the graph's own parameters back and free the overrides. */
void param_override_undo(param_override *po);

#endif
