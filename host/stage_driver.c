/* stage_driver: a one-stage pipeline built by hand, for tests and the conformance checker. */
#include "stage_driver.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "learned_sink.h"

int stage_driver_open(stage_driver *sd, const char *plugin_file, const char *params_yaml,
                      const weft_layout *in, uint32_t n_in, diag *d)
{
    memset(sd, 0, sizeof *sd);
    graph *g = &sd->g;
    g->path = strdup("params");
    g->dir = strdup(".");
    g->name = strdup("driver");
    g->n_stages = 1;
    g->stages = calloc(1, sizeof *g->stages);
    if (!g->path || !g->dir || !g->name || !g->stages)
        return diag_set(d, "out of memory");
    graph_stage *s = &g->stages[0];
    s->name = strdup("stage");
    s->path = strdup(plugin_file);
    if (ydoc_load(&g->doc, "params", params_yaml ? params_yaml : "{}", d))
        return -1;
    s->params = g->doc.root;

    pipeline *pl = &sd->pl;
    pl->g = g;
    pl->n = 1;
    pl->nodes = calloc(1, sizeof *pl->nodes);
    pl->order = calloc(1, sizeof *pl->order);
    if (!pl->nodes || !pl->order)
        return diag_set(d, "out of memory");
    node *n = sd->n = &pl->nodes[0];
    *n = (node){ .pl = pl, .def = s };
    if (plugin_open(&n->plug, plugin_file, d))
        return -1;
    n->api = n->plug.api;
    n->role = n->api->roles & ~(uint32_t)WEFT_ROLE_FITTABLE;
    n->n_in = n_in;
    n->in_layouts = calloc(n_in + 1, sizeof *n->in_layouts);
    n->in_blocks = calloc(n_in + 1, sizeof *n->in_blocks);
    if (!n->in_layouts || !n->in_blocks)
        return diag_set(d, "out of memory");
    if (n_in)
        memcpy(n->in_layouts, in, n_in * sizeof *in);
    if (param_set_resolve(&n->params, n->api->params, s->params, &g->doc, s->name, d) ||
        node_init(n, d) || node_alloc_output(n, d))
        return -1;
    return 0;
}

void stage_driver_close(stage_driver *sd)
{
    if (sd->n)
        node_close(sd->n);
    free(sd->pl.nodes);
    free(sd->pl.order);
    graph_free(&sd->g);
    memset(sd, 0, sizeof *sd);
}

const weft_layout *stage_driver_out(const stage_driver *sd) { return &sd->n->out; }

long stage_driver_process(stage_driver *sd, const float *in, uint32_t frames, float *out,
                          uint32_t out_capacity, diag *d)
{
    node *n = sd->n;
    weft_block ib = { 0 };
    weft_block ob = {
        .data = out,
        .capacity = out_capacity,
        .channels = n->out.channels,
        .first_index = n->produced,
        .markers = sd->markers,
        .marker_capacity = NODE_MARKERS_MAX,
    };
    int rc;
    if (n->role == WEFT_ROLE_SOURCE) {
        ob.capacity = frames < out_capacity ? frames : out_capacity;
        rc = n->api->process(n->self, NULL, 0, &ob);
    } else {
        ib = (weft_block){ .data = (float *)in, .frames = frames,
                           .channels = n->in_layouts[0].channels,
                           .first_index = n->in_blocks[0].first_index };
        n->in_blocks[0].first_index += frames;
        rc = n->api->process(n->self, &ib, 1, n->role == WEFT_ROLE_FILTER ? &ob : NULL);
    }
    if (rc < 0)
        return node_fail(n, d, "failed in process");
    if (rc == WEFT_END)
        return -2;
    n->produced += ob.frames;
    return ob.frames;
}

int stage_driver_query(stage_driver *sd, const weft_window *win, uint32_t n_in, double *values,
                       diag *d)
{
    node *n = sd->n;
    weft_result res = { .values = values, .count = n->out.channels };
    if (n->api->query(n->self, win, n_in, &res) < 0)
        return node_fail(n, d, "failed in query");
    return 0;
}

int stage_driver_fit(stage_driver *sd, const weft_epochs *ep, diag *d)
{
    node *n = sd->n;
    learned_sink ls;
    learned_sink_bind(&ls, &n->params);
    if (!n->api->fit)
        return diag_set(d, "plugin '%s' is not fittable", n->api->name);
    if (n->api->fit(n->self, ep, &ls.sink) < 0)
        return node_fail(n, d, "failed to fit");
    if (ls.bad_name[0])
        return diag_set(d, "stage '%s': fit wrote '%s', which is not a declared parameter of "
                           "that type", n->def->name, ls.bad_name);
    n->api->destroy(n->self);
    n->initialised = 0;
    return node_init(n, d);
}
