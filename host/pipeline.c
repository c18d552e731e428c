/* pipeline: opening plugins and initialising stages in graph order, with every buffer the run
 * loop will need. */
#include "pipeline.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "host_services.h"

#define DEFAULT_BLOCK_SECONDS 0.02
#define MAX_FRAMES_PER_BLOCK (1u << 20)
#define MAX_CHANNELS 4096u

const char *role_name(uint32_t role)
{
    switch (role) {
    case WEFT_ROLE_SOURCE: return "source";
    case WEFT_ROLE_FILTER: return "filter";
    case WEFT_ROLE_READOUT: return "readout";
    case WEFT_ROLE_SINK: return "sink";
    }
    return "?";
}

int node_fail(node *n, diag *d, const char *when)
{
    const graph *g = n->pl->g;
    const char *why = n->error[0] ? n->error : "failed without saying why";
    src_mark at = n->def->mark;
    if (n->error_param)
        at = param_set_mark(&n->params, n->error_param,
                            n->def->params_mark.line ? n->def->params_mark : n->def->mark);
    if (when)
        diag_at(d, g->path, at, "stage '%s' %s: %s", n->def->name, when, why);
    else
        diag_at(d, g->path, at, "stage '%s': %s", n->def->name, why);
    n->error[0] = 0;
    n->error_param = NULL;
    return -1;
}

static int open_plugin(node *n, diag *d)
{
    const graph *g = n->pl->g;
    const graph_stage *s = n->def;
    char *file = NULL;
    diag inner = { 0 };
    if (s->path) {
        size_t len = strlen(g->dir) + strlen(s->path) + 2;
        file = malloc(len);
        if (!file)
            return diag_set(d, "out of memory");
        if (s->path[0] == '/')
            snprintf(file, len, "%s", s->path);
        else
            snprintf(file, len, "%s/%s", g->dir, s->path);
    } else if (plugin_find(&n->pl->path, s->plugin, &file, &inner)) {
        return diag_at(d, g->path, s->plugin_mark, "stage '%s': %s", s->name, inner.msg);
    }
    int rc = plugin_open(&n->plug, file, &inner);
    free(file);
    if (rc)
        return diag_at(d, g->path, s->plugin_mark, "stage '%s': %s", s->name, inner.msg);
    n->api = n->plug.api;
    n->role = n->api->roles & ~(uint32_t)WEFT_ROLE_FITTABLE;
    return 0;
}

/* What the graph asks of a stage must fit what its plugin is. */
static int check_shape(node *n, diag *d)
{
    const graph *g = n->pl->g;
    const graph_stage *s = n->def;
    const char *role = role_name(n->role);
    if (s->n_inputs < n->api->min_inputs || s->n_inputs > n->api->max_inputs) {
        if (n->api->max_inputs == 0)
            return diag_at(d, g->path, s->inputs ? s->inputs[0].mark : s->mark,
                           "stage '%s': plugin '%s' is a %s and takes no input", s->name,
                           n->api->name, role);
        return diag_at(d, g->path, s->mark,
                       "stage '%s': plugin '%s' takes %u to %u inputs, the graph gives %u",
                       s->name, n->api->name, n->api->min_inputs, n->api->max_inputs,
                       s->n_inputs);
    }
    if (n->role == WEFT_ROLE_FILTER && s->n_inputs != 1)
        return diag_at(d, g->path, s->mark, "stage '%s': a filter takes exactly one input",
                       s->name);
    for (unsigned k = 0; k < s->n_inputs; k++) {
        const graph_input *in = &s->inputs[k];
        if (n->role == WEFT_ROLE_READOUT && in->window <= 0)
            return diag_at(d, g->path, in->mark,
                           "stage '%s': readout input '%s' needs a window, e.g. "
                           "{ from: %s, window: 1.0 } or `window: 1.0` on the stage",
                           s->name, in->from, in->from);
        if (n->role != WEFT_ROLE_READOUT && in->window > 0)
            return diag_at(d, g->path, in->window_mark,
                           "stage '%s': only readouts take windows; '%s' is a %s", s->name,
                           n->api->name, role);
    }
    if (s->has_query && n->role != WEFT_ROLE_READOUT)
        return diag_at(d, g->path, s->query.mark,
                       "stage '%s': only readouts are queried; '%s' is a %s", s->name,
                       n->api->name, role);
    if (n->role == WEFT_ROLE_READOUT && !s->has_query)
        return diag_at(d, g->path, s->mark,
                       "stage '%s': a readout needs `query: { every: SECONDS }` or "
                       "`query: { on_marker: [LABELS], after: SECONDS }`", s->name);
    if (s->has_fit && n->role != WEFT_ROLE_READOUT)
        return diag_at(d, g->path, s->fit.mark,
                       "stage '%s': `fit:` (how epochs are cut) belongs on a readout", s->name);
    return 0;
}

static int link_inputs(node *n, diag *d)
{
    pipeline *pl = n->pl;
    const graph_stage *s = n->def;
    n->n_in = s->n_inputs;
    n->in_node = calloc(n->n_in + 1, sizeof *n->in_node);
    n->in_layouts = calloc(n->n_in + 1, sizeof *n->in_layouts);
    n->in_blocks = calloc(n->n_in + 1, sizeof *n->in_blocks);
    if (!n->in_node || !n->in_layouts || !n->in_blocks)
        return diag_set(d, "out of memory");
    for (unsigned k = 0; k < n->n_in; k++) {
        unsigned from = (unsigned)graph_find(pl->g, s->inputs[k].from);
        const node *up = &pl->nodes[from];
        n->in_node[k] = from;
        n->in_layouts[k] = up->out;
        if (up->role == WEFT_ROLE_SINK)
            return diag_at(d, pl->g->path, s->inputs[k].mark,
                           "stage '%s': input '%s' is a sink and produces nothing", s->name,
                           up->def->name);
        if (up->out.kind == WEFT_STREAM_RESULTS && n->role != WEFT_ROLE_SINK)
            return diag_at(d, pl->g->path, s->inputs[k].mark,
                           "stage '%s': input '%s' is a readout; its results can only go to "
                           "a sink", s->name, up->def->name);
    }
    return 0;
}

static int check_layout(node *n, diag *d)
{
    const weft_layout *o = &n->out;
    const char *bad = NULL;
    if (n->role == WEFT_ROLE_SINK)
        return 0;
    if (n->role == WEFT_ROLE_READOUT) {
        if (o->kind != WEFT_STREAM_RESULTS || o->channels == 0 || o->channels > MAX_CHANNELS)
            bad = "a readout's output must be RESULTS with 1 or more values";
    } else if (o->kind != WEFT_STREAM_SAMPLES || o->channels == 0 ||
               o->channels > MAX_CHANNELS || !(o->rate > 0) || !isfinite(o->rate) ||
               o->max_frames == 0 || o->max_frames > MAX_FRAMES_PER_BLOCK) {
        bad = "the output must be SAMPLES with 1-4096 channels, a positive rate and a block "
              "bound of 1 to 2^20 frames";
    }
    if (!bad)
        return 0;
    return diag_at(d, n->pl->g->path, n->def->mark,
                   "stage '%s': plugin '%s' stated an impossible output layout (%u channels, "
                   "%g Hz, %u frames): %s", n->def->name, n->api->name, o->channels, o->rate,
                   o->max_frames, bad);
}

static uint32_t source_block(const pipeline *pl, double rate)
{
    if (pl->opt.block)
        return pl->opt.block;
    double frames = ceil(rate * DEFAULT_BLOCK_SECONDS);
    return frames < 1 ? 1 : (uint32_t)frames;
}

/* Keep the labels the stage stated in host memory. On a re-initialisation (fit, swap) the
 * labels must be the same, since downstream stages hold the first ones. */
static int keep_labels(node *n, diag *d)
{
    const weft_layout *o = &n->out;
    if (!o->labels || o->channels == 0 || o->channels > MAX_CHANNELS)
        return 0;
    if (n->labels) {
        for (uint32_t c = 0; c < o->channels; c++)
            if (!o->labels[c] || strcmp(o->labels[c], n->labels[c]) != 0)
                return diag_at(d, n->pl->g->path, n->def->mark,
                               "stage '%s': output label %u changed from '%s' to '%s'; a "
                               "replacement must keep the channel and class names",
                               n->def->name, c + 1, n->labels[c],
                               o->labels[c] ? o->labels[c] : "(none)");
    } else {
        n->labels = calloc(o->channels, sizeof *n->labels);
        if (!n->labels)
            return diag_set(d, "out of memory");
        n->label_count = o->channels;
        for (uint32_t c = 0; c < o->channels; c++)
            if (!(n->labels[c] = strdup(o->labels[c] ? o->labels[c] : "")))
                return diag_set(d, "out of memory");
    }
    n->out.labels = (const char *const *)n->labels;
    return 0;
}

int node_init(node *n, diag *d)
{
    pipeline *pl = n->pl;
    memset(&n->out, 0, sizeof n->out);
    n->out.name = n->def->name;
    if (n->n_in)
        n->out.max_frames = n->in_layouts[0].max_frames;
    host_services_bind(n);
    int rc = n->api->init(&n->host, &n->params.view, n->in_layouts, n->n_in, &n->out, &n->self);
    if (rc < 0)
        return node_fail(n, d, NULL);
    n->initialised = 1;
    n->out.name = n->def->name;
    if (n->role == WEFT_ROLE_SOURCE) {
        if (!(n->out.rate > 0) || !isfinite(n->out.rate))
            return check_layout(n, d);
        n->out.max_frames = source_block(pl, n->out.rate);
    }
    if (n->role == WEFT_ROLE_READOUT)
        n->out.rate = 0;
    return check_layout(n, d) || keep_labels(n, d) ? -1 : 0;
}

int node_alloc_output(node *n, diag *d)
{
    if (n->role != WEFT_ROLE_SOURCE && n->role != WEFT_ROLE_FILTER)
        return 0;
    size_t samples = (size_t)n->out.max_frames * n->out.channels;
    n->out_data = calloc(samples, sizeof *n->out_data);
    n->out_markers = calloc(NODE_MARKERS_MAX, sizeof *n->out_markers);
    if (n->role == WEFT_ROLE_SOURCE)
        n->marker_text = calloc(NODE_MARKERS_MAX, sizeof *n->marker_text);
    if (!n->out_data || !n->out_markers || (n->role == WEFT_ROLE_SOURCE && !n->marker_text))
        return diag_set(d, "stage '%s': out of memory for %zu samples", n->def->name, samples);
    return 0;
}

/* The longest any source can run ahead of another between two rounds. */
static void compute_skew(pipeline *pl)
{
    pl->max_skew = 0;
    for (unsigned i = 0; i < pl->n; i++) {
        const node *n = &pl->nodes[i];
        if (n->role == WEFT_ROLE_SOURCE && n->out.rate > 0)
            pl->max_skew += n->out.max_frames / n->out.rate;
    }
}

static int alloc_readout(node *n, diag *d)
{
    if (n->role != WEFT_ROLE_READOUT)
        return 0;
    const graph *g = n->pl->g;
    n->rings = calloc(n->n_in, sizeof *n->rings);
    n->win_frames = calloc(n->n_in, sizeof *n->win_frames);
    n->windows = calloc(n->n_in, sizeof *n->windows);
    n->values = calloc(n->out.channels, sizeof *n->values);
    if (!n->rings || !n->win_frames || !n->windows || !n->values)
        return diag_set(d, "out of memory");
    double earliest = 0;
    for (unsigned k = 0; k < n->n_in; k++) {
        const weft_layout *in = &n->in_layouts[k];
        double frames = round(n->def->inputs[k].window * in->rate);
        if (frames < 1)
            return diag_at(d, g->path, n->def->inputs[k].window_mark,
                           "stage '%s': window %g s is less than one sample at %g Hz",
                           n->def->name, n->def->inputs[k].window, in->rate);
        n->win_frames[k] = (uint32_t)frames;
        /* Room for the window, for one input block arriving after the query's end, and for
         * the other sources being behind by up to a round each. */
        double slack = ceil(2 * n->pl->max_skew * in->rate) + in->max_frames + 1;
        if (frames + slack > (double)(1u << 31) ||
            ring_init(&n->rings[k], (uint32_t)(frames + slack), in->channels))
            return diag_set(d, "stage '%s': cannot keep %g frames of %u channels", n->def->name,
                            frames + slack, in->channels);
        double span = frames / in->rate;
        if (span > earliest)
            earliest = span;
    }
    const graph_query *q = &n->def->query;
    query_plan_init(&n->plan, q->every, q->after, (const char *const *)q->on_marker,
                    q->n_on_marker, earliest);
    return 0;
}

static int alloc_history(node *n, diag *d)
{
    if (n->role != WEFT_ROLE_FILTER || n->pl->opt.swap_warmup <= 0)
        return 0;
    const weft_layout *in = &n->in_layouts[0];
    double frames = ceil(n->pl->opt.swap_warmup * in->rate);
    if (frames < 1)
        frames = 1;
    if (frames > (double)(1u << 24) || ring_init(&n->history, (uint32_t)frames, in->channels))
        return diag_set(d, "stage '%s': cannot keep %g s of input for swaps", n->def->name,
                        n->pl->opt.swap_warmup);
    return 0;
}

static int check_fitted(node *n, diag *d)
{
    if (n->pl->opt.for_fit || !(n->api->roles & WEFT_ROLE_FITTABLE))
        return 0;
    for (uint32_t i = 0; i < n->params.count; i++) {
        const weft_param *p = &n->params.items[i];
        const weft_param_spec *spec = &n->api->params[i];
        if ((spec->flags & WEFT_PARAM_LEARNED) && !p->given)
            return diag_at(d, n->pl->g->path, n->def->mark,
                           "stage '%s' is not fitted (no '%s'); run `weft fit %s --data "
                           "RECORDING -o FITTED.yaml` and run the fitted graph",
                           n->def->name, p->name, n->pl->g->path);
    }
    return 0;
}

static int open_node(pipeline *pl, unsigned i, diag *d)
{
    node *n = &pl->nodes[i];
    if (open_plugin(n, d) || check_shape(n, d) || link_inputs(n, d))
        return -1;
    if (param_set_resolve(&n->params, n->api->params, n->def->params, &pl->g->doc,
                          n->def->name, d))
        return -1;
    if (pl->opt.idle_sinks && n->role == WEFT_ROLE_SINK) {
        n->skip = 1;
        return 0;
    }
    if (check_fitted(n, d) || node_init(n, d) || node_alloc_output(n, d) ||
        alloc_history(n, d))
        return -1;
    return 0;
}

int pipeline_open(pipeline *pl, graph *g, const pipeline_options *opt, diag *d)
{
    memset(pl, 0, sizeof *pl);
    pl->g = g;
    pl->opt = *opt;
    pl->n = g->n_stages;
    pl->nodes = calloc(pl->n, sizeof *pl->nodes);
    pl->order = calloc(pl->n, sizeof *pl->order);
    if (!pl->nodes || !pl->order)
        return diag_set(d, "out of memory");
    for (unsigned i = 0; i < pl->n; i++)
        pl->nodes[i] = (node){ .pl = pl, .def = &g->stages[i], .index = i };
    plugin_path_init(&pl->path, g->dir);
    if (graph_topo_order(g, pl->order, d))
        goto fail;
    for (unsigned k = 0; k < pl->n; k++)
        if (open_node(pl, pl->order[k], d))
            goto fail;
    compute_skew(pl);
    for (unsigned k = 0; k < pl->n; k++)
        if (alloc_readout(&pl->nodes[pl->order[k]], d))
            goto fail;
    return 0;
fail:
    pipeline_close(pl);
    return -1;
}

void node_close(node *n)
{
    if (n->initialised && n->api && n->api->destroy)
        n->api->destroy(n->self);
    n->initialised = 0;
    n->self = NULL;
    for (unsigned k = 0; n->rings && k < n->n_in; k++)
        ring_free(&n->rings[k]);
    ring_free(&n->history);
    for (uint32_t c = 0; n->labels && c < n->label_count; c++)
        free(n->labels[c]);
    free(n->labels);
    free(n->rings);
    free(n->win_frames);
    free(n->windows);
    free(n->values);
    free(n->in_node);
    free(n->in_layouts);
    free(n->in_blocks);
    free(n->out_data);
    free(n->out_markers);
    free(n->marker_text);
    param_set_free(&n->params);
    plugin_close(&n->plug);
}

void pipeline_close(pipeline *pl)
{
    /* Sinks last out, so what they buffered still sees its producers' strings. Reverse
     * topological order does that. */
    for (unsigned k = pl->n; pl->order && k-- > 0;)
        node_close(&pl->nodes[pl->order[k]]);
    plugin_path_free(&pl->path);
    free(pl->nodes);
    free(pl->order);
    memset(pl, 0, sizeof *pl);
}

int pipeline_reinit(pipeline *pl, unsigned node_index, diag *d)
{
    node *n = &pl->nodes[node_index];
    weft_layout before = n->out;
    if (n->initialised)
        n->api->destroy(n->self);
    n->initialised = 0;
    n->self = NULL;
    if (node_init(n, d))
        return -1;
    if (n->out.channels != before.channels || n->out.rate != before.rate)
        return diag_set(d, "stage '%s': its output changed from %u channels at %g Hz to %u at "
                           "%g Hz when re-initialised", n->def->name, before.channels,
                        before.rate, n->out.channels, n->out.rate);
    return 0;
}

int pipeline_rewind(pipeline *pl, diag *d)
{
    pl->n_watched = 0; /* sources register their descriptors again in init */
    for (unsigned k = 0; k < pl->n; k++) {
        node *n = &pl->nodes[pl->order[k]];
        /* A skipped stage does not run until the next rewind, which re-initialises it; a
         * skipped sink is not re-opened, so its output file is left alone. */
        /* Upstream stages were re-initialised first (graph order): their label strings are
         * new, so take their layouts again. */
        for (unsigned i = 0; i < n->n_in; i++)
            n->in_layouts[i] = pl->nodes[n->in_node[i]].out;
        if (!n->skip && pipeline_reinit(pl, n->index, d))
            return -1;
        n->produced = 0;
        n->ended = 0;
        n->seq = 0;
        n->out_block.frames = 0;
        n->out_block.n_markers = 0;
        for (unsigned i = 0; n->rings && i < n->n_in; i++)
            n->rings[i].end = 0;
        if (n->role == WEFT_ROLE_READOUT)
            query_plan_init(&n->plan, n->plan.every, n->plan.after, n->plan.labels,
                            n->plan.n_labels, n->plan.earliest);
    }
    return 0;
}
