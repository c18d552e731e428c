/* graph_set: changing one parameter of a loaded graph from the command line
 * (`--set eeg.seed=12`), as if the file said so -- the same checks apply when the plugins are
 * opened. Lets one graph serve a calibration run and an online session. */
#ifndef WEFT_GRAPH_SET_H
#define WEFT_GRAPH_SET_H

#include "graph.h"

/* `assignment` is STAGE.PARAM=VALUE (given with `option`, named in messages), VALUE written as in a graph file ("12", "[8, 30]").
 * Returns 0, or -1 with a message naming the problem. */
int graph_set_param(graph *g, const char *option, const char *assignment, diag *d);

#endif
