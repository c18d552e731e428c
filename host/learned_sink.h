/* learned_sink: the weft_param_sink a stage's fit writes into, storing each learned value in
 * the stage's parameter set (so a fitted stage is a stage with more parameters). */
#ifndef WEFT_LEARNED_SINK_H
#define WEFT_LEARNED_SINK_H

#include "params.h"

typedef struct learned_sink {
    weft_param_sink sink;       /* hand &sink to fit */
    param_set *ps;
    unsigned written;
    char bad_name[64];          /* first write that did not match a declaration */
} learned_sink;

void learned_sink_bind(learned_sink *ls, param_set *ps);

#endif
