/* graph: the model of a graph file -- stages, their plugins, parameters, inputs, windows and
 * query schedules -- with the file position of everything, before any plugin is opened. */
#ifndef WEFT_GRAPH_H
#define WEFT_GRAPH_H

#include "yaml_doc.h"

#define GRAPH_FORMAT_VERSION 1
#define GRAPH_MAX_STAGES 256
#define GRAPH_DEFAULT_HISTORY 10.0   /* seconds of history a readout window may span */

typedef struct graph_input {
    char *from;             /* name of the upstream stage */
    double window;          /* seconds; 0 when not given */
    src_mark mark;          /* of the `from` value */
    src_mark window_mark;
} graph_input;

typedef struct graph_query {
    double every;           /* seconds; 0 = no periodic queries */
    char **on_marker;       /* labels that trigger a query */
    unsigned n_on_marker;
    double after;           /* seconds after the marker */
    src_mark mark;
} graph_query;

typedef struct graph_fit_class {
    char *name;
    char **labels;          /* marker labels that make an epoch of this class */
    unsigned n_labels;
    src_mark mark;
} graph_fit_class;

/* How a readout's training epochs are cut from labelled data (used by `weft fit`). */
typedef struct graph_fit {
    graph_fit_class *classes;
    unsigned n_classes;
    double after;           /* the epoch windows end this long after the marker */
    src_mark mark;
} graph_fit;

typedef struct graph_stage {
    char *name;
    char *plugin;           /* a plugin name (searched) ... */
    char *path;             /* ... or an explicit .so path (`path:` key), relative to the graph */
    graph_input *inputs;
    unsigned n_inputs;
    int has_query;
    graph_query query;
    int has_fit;
    graph_fit fit;
    const ynode *params;    /* the `params` map as written (NULL if absent); owned by the doc */
    src_mark mark;          /* of the stage's name */
    src_mark plugin_mark;
    src_mark params_mark;
} graph_stage;

typedef struct graph {
    ydoc doc;
    char *path;
    char *dir;              /* folder of the graph file */
    char *name;
    double history;         /* longest window any readout input may use, seconds */
    src_mark history_mark;
    graph_stage *stages;
    unsigned n_stages;
} graph;

/* Read and check the structure of a graph file: keys, types, names, references between
 * stages, cycles, windows against history. Plugins are not opened here. Returns 0, or -1 with
 * a file:line:column message. `text` may hold the file's content (tests), else NULL. */
int graph_load(graph *g, const char *path, const char *text, diag *d);
void graph_free(graph *g);

/* Index of the stage called `name`, or -1. */
int graph_find(const graph *g, const char *name);

/* Stage indices in an order where every stage comes after its inputs. Fails, naming the
 * stages on the cycle, if there is one. `order` has room for g->n_stages entries. */
int graph_topo_order(const graph *g, unsigned *order, diag *d);

#endif
