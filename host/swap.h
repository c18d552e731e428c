/* swap: replacing a filter or readout of a running pipeline -- other parameter values or
 * another plugin -- between two rounds, without losing a sample. A filter's replacement is
 * first warmed up on the recent input the host kept for it, so its state is settled when it
 * takes over; a readout's replacement reads the same rings, so it needs no warm-up. */
#ifndef WEFT_SWAP_H
#define WEFT_SWAP_H

#include "pipeline.h"

typedef struct swap_report {
    uint64_t index;             /* first sample (of the stage's input) the new stage handles */
    double time;                /* that sample's stream time */
    uint64_t warmup_frames;     /* history the replacement was warmed up on */
} swap_report;

/* Swap stage `name` of `pl`: `plugin` is another plugin's name (NULL: keep the plugin) and
 * `params_yaml` a YAML map of parameter values (NULL or "{}": none). With the same plugin,
 * parameters not given keep their current values; with another plugin, they start from its
 * defaults. The output layout (channels, rate, labels) must stay the same. On failure the
 * old stage keeps running and d says why. */
int swap_stage(pipeline *pl, const char *name, const char *plugin, const char *params_yaml,
               swap_report *rep, diag *d);

#endif
