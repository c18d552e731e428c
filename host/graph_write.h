/* graph_write: a graph model written back as a graph file -- the same stages, inputs, windows,
 * queries, `fit:` and parameters -- with the learned parameters of the pipeline's stages filled
 * in as ordinary parameters. This is how `weft fit` hands its result to `weft run`. */
#ifndef WEFT_GRAPH_WRITE_H
#define WEFT_GRAPH_WRITE_H

#include "pipeline.h"

/* Write graph g to `path` (through a temporary file, renamed when complete), each stage with
 * the learned parameters of the stage of the same name in pl (pl may run another version of
 * g: its sources replaced by a recording, parameters changed for calibration). `header` is
 * written first as comment lines (one '#' per line of it); may be NULL. A stage's `path:` that
 * is relative is made absolute when `path` is in another folder than the graph. Returns 0 or
 * -1 with d set. */
int graph_write(const graph *g, const pipeline *pl, const char *header, const char *path,
                diag *d);

#endif
