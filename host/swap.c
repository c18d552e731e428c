/* swap: stage replacement at a block boundary. */
#include "swap.h"

#include <stdlib.h>
#include <string.h>

/* Everything of a node that belongs to one plugin instance. */
typedef struct instance {
    plugin plug;
    const weft_stage_api *api;
    param_set params;
    void *self;
    weft_layout out;
} instance;

static instance take(node *n)
{
    return (instance){ n->plug, n->api, n->params, n->self, n->out };
}

static void put(node *n, const instance *in)
{
    n->plug = in->plug;
    n->api = in->api;
    n->params = in->params;
    n->self = in->self;
    n->out = in->out;
    n->initialised = 1;
}

static int same_layout(const weft_layout *a, const weft_layout *b)
{
    return a->kind == b->kind && a->channels == b->channels && a->rate == b->rate &&
           a->max_frames <= b->max_frames;
}

/* Run the kept input history through the new filter, discarding its output. */
static int warm_up(node *n, swap_report *rep, diag *d)
{
    ring *h = &n->history;
    if (!h->data)
        return 0;
    uint64_t have = h->end < h->capacity ? h->end : h->capacity;
    uint64_t at = h->end - have;
    while (at < h->end) {
        uint64_t left = h->end - at;
        uint32_t frames = left > n->in_layouts[0].max_frames ? n->in_layouts[0].max_frames
                                                             : (uint32_t)left;
        weft_block in = { .data = (float *)ring_window(h, at + frames, frames),
                          .frames = frames,
                          .channels = h->channels,
                          .first_index = at };
        weft_block out = { .data = n->out_data, .capacity = n->out.max_frames,
                           .channels = n->out.channels, .markers = n->out_markers,
                           .marker_capacity = NODE_MARKERS_MAX };
        if (!in.data || n->api->process(n->self, &in, 1, &out) < 0)
            return node_fail(n, d, "failed while warming up");
        at += frames;
    }
    rep->warmup_frames = have;
    return 0;
}

static int open_other_plugin(pipeline *pl, node *n, const char *name, diag *d)
{
    char *file = NULL;
    diag inner = { 0 };
    if (plugin_find(&pl->path, name, &file, &inner) || plugin_open(&n->plug, file, &inner)) {
        free(file);
        return diag_set(d, "swap '%s': %s", n->def->name, inner.msg);
    }
    free(file);
    n->api = n->plug.api;
    if ((n->api->roles & ~(uint32_t)WEFT_ROLE_FITTABLE) != n->role) {
        diag_set(d, "swap '%s': plugin '%s' is not a %s", n->def->name, name,
                 role_name(n->role));
        plugin_close(&n->plug);
        return -1;
    }
    return 0;
}

int swap_stage(pipeline *pl, const char *name, const char *plugin_name,
               const char *params_yaml, swap_report *rep, diag *d)
{
    memset(rep, 0, sizeof *rep);
    int index = graph_find(pl->g, name);
    if (index < 0)
        return diag_set(d, "swap: no stage '%s' in this graph", name);
    node *n = &pl->nodes[index];
    if (n->role != WEFT_ROLE_FILTER && n->role != WEFT_ROLE_READOUT)
        return diag_set(d, "swap '%s': only filters and readouts can be swapped; a %s's stream "
                           "or files would restart", name, role_name(n->role));
    ydoc doc;
    if (ydoc_load(&doc, "swap", params_yaml && *params_yaml ? params_yaml : "{}", d))
        return -1;
    if (doc.root && doc.root->kind != YNODE_MAP) {
        ydoc_free(&doc);
        return diag_set(d, "swap '%s': parameters must be a map like {freq: 50}", name);
    }
    instance old = take(n);
    int rc = 0;
    memset(&n->plug, 0, sizeof n->plug);
    if (plugin_name)
        rc = open_other_plugin(pl, n, plugin_name, d);
    else
        n->plug = old.plug;
    if (rc == 0)
        rc = param_set_resolve_over(&n->params, n->api->params, doc.root, &doc, name,
                                    plugin_name ? NULL : &old.params, d);
    ydoc_free(&doc);
    if (rc == 0) {
        n->initialised = 0;
        rc = node_init(n, d);
        /* init failing frees its own instance; a layout refused after init does not */
        if (rc && n->initialised)
            n->api->destroy(n->self);
    }
    if (rc == 0 && !same_layout(&n->out, &old.out)) {
        diag_set(d, "swap '%s': the replacement produces %u channels at %g Hz, the stage "
                    "produced %u at %g Hz; downstream stages rely on that",
                 name, n->out.channels, n->out.rate, old.out.channels, old.out.rate);
        n->api->destroy(n->self);
        rc = -1;
    }
    if (rc == 0 && n->role == WEFT_ROLE_FILTER && warm_up(n, rep, d)) {
        n->api->destroy(n->self);
        rc = -1;
    }
    if (rc) {
        if (n->params.items != old.params.items)
            param_set_free(&n->params);
        if (plugin_name && n->plug.handle)
            plugin_close(&n->plug);
        put(n, &old);
        return -1;
    }
    n->out = old.out; /* keep the host's label copies and block bound */
    old.api->destroy(old.self);
    param_set_free(&old.params);
    if (plugin_name)
        plugin_close(&old.plug);
    const weft_layout *in = &n->in_layouts[0];
    rep->index = n->role == WEFT_ROLE_FILTER ? n->history.end : n->rings[0].end;
    if (n->role == WEFT_ROLE_FILTER && !n->history.data)
        rep->index = pl->nodes[n->in_node[0]].produced;
    rep->time = in->rate > 0 ? (double)rep->index / in->rate : 0;
    return 0;
}
