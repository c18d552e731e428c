/* graph_topo: the processing order of a graph, and the cycle that prevents one. */
#include "graph.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

enum { UNSEEN, ON_PATH, DONE };

typedef struct walk {
    const graph *g;
    unsigned char *state;
    unsigned *order, n_done;
    unsigned *path, n_path;
    diag *d;
} walk;

static int report_cycle(walk *w, unsigned back_to)
{
    char text[512] = "";
    unsigned start = 0;
    while (start < w->n_path && w->path[start] != back_to)
        start++;
    for (unsigned i = start; i < w->n_path; i++) {
        strncat(text, w->g->stages[w->path[i]].name, sizeof text - strlen(text) - 1);
        strncat(text, " -> ", sizeof text - strlen(text) - 1);
    }
    strncat(text, w->g->stages[back_to].name, sizeof text - strlen(text) - 1);
    const graph_stage *s = &w->g->stages[back_to];
    return diag_at(w->d, w->g->path, s->mark,
                   "stage '%s' depends on itself through a cycle (%s); a graph must flow one "
                   "way from sources to sinks", s->name, text);
}

/* Depth-first over inputs; the depth is at most the stage count, which graph_load caps. */
static int visit(walk *w, unsigned s)
{
    if (w->state[s] == DONE)
        return 0;
    if (w->state[s] == ON_PATH)
        return report_cycle(w, s);
    w->state[s] = ON_PATH;
    w->path[w->n_path++] = s;
    const graph_stage *st = &w->g->stages[s];
    for (unsigned k = 0; k < st->n_inputs; k++) {
        int from = graph_find(w->g, st->inputs[k].from);
        if (from >= 0 && visit(w, (unsigned)from))
            return -1;
    }
    w->n_path--;
    w->state[s] = DONE;
    w->order[w->n_done++] = s;
    return 0;
}

int graph_topo_order(const graph *g, unsigned *order, diag *d)
{
    walk w = { g, calloc(g->n_stages, 1), order, 0, calloc(g->n_stages, sizeof(unsigned)), 0,
               d };
    int rc = w.state && w.path ? 0 : diag_set(d, "out of memory");
    for (unsigned s = 0; rc == 0 && s < g->n_stages; s++)
        rc = visit(&w, s);
    free(w.state);
    free(w.path);
    return rc;
}
