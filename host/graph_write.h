/* graph_write: a graph model written back as a graph file -- the same stages, inputs, windows,
 * queries, `fit:` and parameters -- with the learned parameters of the pipeline's stages filled
 * in as ordinary parameters. This is how `weft fit` hands its result to `weft run`. */
#ifndef WEFT_GRAPH_WRITE_H
#define WEFT_GRAPH_WRITE_H

#include "pipeline.h"

/* Write pl's graph to `path` (through a temporary file, renamed when complete). `header` is
 * written first as comment lines (one '#' per line of it); may be NULL. A stage's `path:` that
 * is relative is made absolute when `path` is in another folder than the graph. Returns 0 or
 * -1 with d set. */
int graph_write(const pipeline *pl, const char *header, const char *path, diag *d);

#endif
