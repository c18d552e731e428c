/* graph_load: turns a graph file's YAML tree into the graph model and checks its structure.
 * It knows keys and references between stages; what a plugin accepts is checked later. */
#include "graph.h"

#include <stdlib.h>
#include <string.h>

#include "yaml_value.h"

static const char *const top_keys[] = { "weft", "name", "history", "stages", NULL };
static const char *const stage_keys[] = { "plugin", "path",   "input", "window",
                                          "query",  "params", "fit",   NULL };
static const char *const input_keys[] = { "from", "window", NULL };
static const char *const query_keys[] = { "every", "on_marker", "after", NULL };
static const char *const fit_keys[] = { "classes", "after", NULL };

typedef struct loader {
    graph *g;
    const ydoc *doc;
    diag *d;
} loader;

static int valid_name(const char *s)
{
    if (!*s || strlen(s) > 64)
        return 0;
    for (; *s; s++)
        if (!((*s >= 'a' && *s <= 'z') || (*s >= 'A' && *s <= 'Z') || (*s >= '0' && *s <= '9') ||
              *s == '_' || *s == '-'))
            return 0;
    return 1;
}

static int load_string_list(loader *l, const ynode *n, const char *what, char ***out,
                            unsigned *count)
{
    if (n->kind == YNODE_SCALAR) { /* a single label is a list of one */
        *out = calloc(1, sizeof **out);
        if (!*out || !((*out)[0] = strdup(n->text)))
            return diag_set(l->d, "out of memory");
        *count = 1;
        return 0;
    }
    if (yval_expect(l->doc, n, YNODE_SEQ, what, l->d))
        return -1;
    *out = calloc(n->n ? n->n : 1, sizeof **out);
    if (!*out)
        return diag_set(l->d, "out of memory");
    for (unsigned i = 0; i < n->n; i++) {
        const char *s;
        if (yval_string(l->doc, n->items[i], what, &s, l->d))
            return -1;
        if (!((*out)[i] = strdup(s)))
            return diag_set(l->d, "out of memory");
        (*count)++;
    }
    return 0;
}

static int load_window(loader *l, const ynode *n, const char *stage, double *out)
{
    if (yval_number(l->doc, n, "window", out, l->d))
        return -1;
    if (*out <= 0)
        return diag_at(l->d, l->doc->path, n->mark,
                       "stage '%s': window must be a positive number of seconds, not %g", stage,
                       *out);
    if (*out > l->g->history)
        return diag_at(l->d, l->doc->path, n->mark,
                       "stage '%s': window %g s is longer than the %g s of history kept; "
                       "shorten it or raise `history:` at the top of the graph",
                       stage, *out, l->g->history);
    return 0;
}

static int load_one_input(loader *l, graph_stage *s, const ynode *n, graph_input *in)
{
    if (n->kind == YNODE_SCALAR) {
        in->mark = n->mark;
        return (in->from = strdup(n->text)) ? 0 : diag_set(l->d, "out of memory");
    }
    if (n->kind != YNODE_MAP)
        return diag_at(l->d, l->doc->path, n->mark,
                       "stage '%s': an input is a stage name or { from: NAME, window: SECONDS }",
                       s->name);
    if (yval_check_keys(l->doc, n, input_keys, "an input", l->d))
        return -1;
    const ynode *from = ynode_get(n, "from"), *window = ynode_get(n, "window");
    const char *name;
    if (!from)
        return diag_at(l->d, l->doc->path, n->mark, "stage '%s': input without `from:`",
                       s->name);
    if (yval_string(l->doc, from, "from", &name, l->d))
        return -1;
    in->mark = from->mark;
    if (!(in->from = strdup(name)))
        return diag_set(l->d, "out of memory");
    if (window) {
        in->window_mark = window->mark;
        return load_window(l, window, s->name, &in->window);
    }
    return 0;
}

static int load_inputs(loader *l, graph_stage *s, const ynode *n, const ynode *window)
{
    unsigned count = n->kind == YNODE_SEQ ? n->n : 1;
    s->inputs = calloc(count ? count : 1, sizeof *s->inputs);
    if (!s->inputs)
        return diag_set(l->d, "out of memory");
    for (unsigned i = 0; i < count; i++) {
        const ynode *item = n->kind == YNODE_SEQ ? n->items[i] : n;
        s->n_inputs++; /* counted first, so graph_free releases a half-loaded input */
        if (load_one_input(l, s, item, &s->inputs[i]))
            return -1;
    }
    double shared = 0;
    if (window && load_window(l, window, s->name, &shared))
        return -1;
    for (unsigned i = 0; i < s->n_inputs; i++)
        if (s->inputs[i].window == 0 && window) {
            s->inputs[i].window = shared;
            s->inputs[i].window_mark = window->mark;
        }
    return 0;
}

static int load_query(loader *l, graph_stage *s, const ynode *n)
{
    if (yval_expect(l->doc, n, YNODE_MAP, "query", l->d) ||
        yval_check_keys(l->doc, n, query_keys, "query", l->d))
        return -1;
    graph_query *q = &s->query;
    q->mark = n->mark;
    const ynode *every = ynode_get(n, "every"), *on = ynode_get(n, "on_marker"),
                *after = ynode_get(n, "after");
    if (every) {
        if (yval_number(l->doc, every, "every", &q->every, l->d))
            return -1;
        if (q->every <= 0)
            return diag_at(l->d, l->doc->path, every->mark,
                           "stage '%s': every must be a positive number of seconds", s->name);
    }
    if (on && load_string_list(l, on, "on_marker", &q->on_marker, &q->n_on_marker))
        return -1;
    if (after) {
        if (yval_number(l->doc, after, "after", &q->after, l->d))
            return -1;
        if (q->after < 0 || !on)
            return diag_at(l->d, l->doc->path, after->mark,
                           "stage '%s': after is a delay >= 0 s following an on_marker label",
                           s->name);
    }
    if (!every && !on)
        return diag_at(l->d, l->doc->path, n->mark,
                       "stage '%s': a query needs `every: SECONDS` or `on_marker: [LABELS]`",
                       s->name);
    s->has_query = 1;
    return 0;
}

static int load_fit(loader *l, graph_stage *s, const ynode *n)
{
    if (yval_expect(l->doc, n, YNODE_MAP, "fit", l->d) ||
        yval_check_keys(l->doc, n, fit_keys, "fit", l->d))
        return -1;
    graph_fit *f = &s->fit;
    f->mark = n->mark;
    const ynode *classes = ynode_get(n, "classes"), *after = ynode_get(n, "after");
    if (!classes)
        return diag_at(l->d, l->doc->path, n->mark,
                       "stage '%s': fit needs `classes: { CLASS: [MARKER LABELS] }`", s->name);
    if (yval_expect(l->doc, classes, YNODE_MAP, "classes", l->d))
        return -1;
    if (classes->n < 2)
        return diag_at(l->d, l->doc->path, classes->mark,
                       "stage '%s': fitting needs at least two classes, found %u", s->name,
                       classes->n);
    f->classes = calloc(classes->n, sizeof *f->classes);
    if (!f->classes)
        return diag_set(l->d, "out of memory");
    for (unsigned i = 0; i < classes->n; i++) {
        graph_fit_class *c = &f->classes[f->n_classes++];
        c->name = strdup(classes->keys[i]->text);
        c->mark = classes->keys[i]->mark;
        if (!c->name ||
            load_string_list(l, classes->items[i], "marker labels", &c->labels, &c->n_labels))
            return diag_set(l->d, "out of memory");
    }
    if (after && yval_number(l->doc, after, "after", &f->after, l->d))
        return -1;
    s->has_fit = 1;
    return 0;
}

static int load_plugin_ref(loader *l, graph_stage *s, const ynode *n)
{
    const ynode *plugin = ynode_get(n, "plugin"), *path = ynode_get(n, "path");
    const char *text;
    if (!plugin && !path)
        return diag_at(l->d, l->doc->path, s->mark,
                       "stage '%s' needs `plugin: NAME` (or `path: FILE.so`)", s->name);
    if (plugin && path)
        return diag_at(l->d, l->doc->path, path->mark,
                       "stage '%s': give `plugin:` or `path:`, not both", s->name);
    if (plugin) {
        if (yval_string(l->doc, plugin, "plugin", &text, l->d))
            return -1;
        s->plugin_mark = plugin->mark;
        if (strchr(text, '/') || strstr(text, "..") || !valid_name(text))
            return diag_at(l->d, l->doc->path, plugin->mark,
                           "stage '%s': plugin '%s' must be a plain name (letters, digits, _ "
                           "or -); to load a file, write `path: %s`",
                           s->name, text, text);
        return (s->plugin = strdup(text)) ? 0 : diag_set(l->d, "out of memory");
    }
    if (yval_string(l->doc, path, "path", &text, l->d))
        return -1;
    s->plugin_mark = path->mark;
    return (s->path = strdup(text)) ? 0 : diag_set(l->d, "out of memory");
}

static int load_stage(loader *l, const ynode *key, const ynode *n, graph_stage *s)
{
    s->mark = key->mark;
    if (!(s->name = strdup(key->text)))
        return diag_set(l->d, "out of memory");
    if (!valid_name(s->name))
        return diag_at(l->d, l->doc->path, key->mark,
                       "stage name '%s' must be 1-64 letters, digits, _ or -", s->name);
    if (yval_expect(l->doc, n, YNODE_MAP, "a stage", l->d) ||
        yval_check_keys(l->doc, n, stage_keys, "a stage", l->d) || load_plugin_ref(l, s, n))
        return -1;
    const ynode *input = ynode_get(n, "input"), *window = ynode_get(n, "window");
    const ynode *query = ynode_get(n, "query"), *params = ynode_get(n, "params");
    const ynode *fit = ynode_get(n, "fit");
    if (window && !input)
        return diag_at(l->d, l->doc->path, window->mark,
                       "stage '%s': window without input", s->name);
    if (input && load_inputs(l, s, input, window))
        return -1;
    if (query && load_query(l, s, query))
        return -1;
    if (fit && load_fit(l, s, fit))
        return -1;
    if (params) {
        if (yval_expect(l->doc, params, YNODE_MAP, "params", l->d))
            return -1;
        s->params = params;
        s->params_mark = params->mark;
    }
    return 0;
}

static int check_references(loader *l)
{
    graph *g = l->g;
    for (unsigned i = 0; i < g->n_stages; i++) {
        graph_stage *s = &g->stages[i];
        for (unsigned k = 0; k < s->n_inputs; k++) {
            graph_input *in = &s->inputs[k];
            if (strcmp(in->from, s->name) == 0)
                return diag_at(l->d, g->path, in->mark, "stage '%s' cannot be its own input",
                               s->name);
            if (graph_find(g, in->from) >= 0)
                continue;
            const char *names[GRAPH_MAX_STAGES];
            unsigned n = g->n_stages;
            for (unsigned j = 0; j < n; j++)
                names[j] = g->stages[j].name;
            const char *near = yval_nearest(in->from, names, n);
            return diag_at(l->d, g->path, in->mark,
                           "stage '%s': input '%s' is not a stage of this graph%s%s%s", s->name,
                           in->from, near ? "; did you mean '" : "", near ? near : "",
                           near ? "'?" : "");
        }
    }
    return 0;
}

static int load_top(loader *l)
{
    graph *g = l->g;
    const ynode *root = g->doc.root;
    if (!root)
        return diag_set(l->d, "%s: the file is empty; a graph starts with `weft: %d`", g->path,
                        GRAPH_FORMAT_VERSION);
    if (yval_expect(l->doc, root, YNODE_MAP, "a graph file", l->d) ||
        yval_check_keys(l->doc, root, top_keys, "the graph", l->d))
        return -1;
    const ynode *version = ynode_get(root, "weft");
    long long v = 0;
    if (!version)
        return diag_at(l->d, g->path, root->mark,
                       "missing `weft: %d` (the graph format version)", GRAPH_FORMAT_VERSION);
    if (yval_integer(l->doc, version, "weft", &v, l->d))
        return -1;
    if (v != GRAPH_FORMAT_VERSION)
        return diag_at(l->d, g->path, version->mark,
                       "graph format %lld is not known; this weft reads format %d", v,
                       GRAPH_FORMAT_VERSION);
    const ynode *name = ynode_get(root, "name"), *history = ynode_get(root, "history");
    const char *text = "graph";
    if (name && yval_string(l->doc, name, "name", &text, l->d))
        return -1;
    if (!(g->name = strdup(text)))
        return diag_set(l->d, "out of memory");
    g->history = GRAPH_DEFAULT_HISTORY;
    if (history) {
        g->history_mark = history->mark;
        if (yval_number(l->doc, history, "history", &g->history, l->d))
            return -1;
        if (g->history <= 0 || g->history > 3600)
            return diag_at(l->d, g->path, history->mark,
                           "history must be between 0 and 3600 seconds, not %g", g->history);
    }
    const ynode *stages = ynode_get(root, "stages");
    if (!stages)
        return diag_at(l->d, g->path, root->mark, "missing `stages:`");
    if (yval_expect(l->doc, stages, YNODE_MAP, "stages", l->d))
        return -1;
    if (stages->n == 0)
        return diag_at(l->d, g->path, stages->mark, "`stages:` is empty");
    if (stages->n > GRAPH_MAX_STAGES)
        return diag_at(l->d, g->path, stages->mark, "%u stages; a graph holds at most %d",
                       stages->n, GRAPH_MAX_STAGES);
    g->stages = calloc(stages->n, sizeof *g->stages);
    if (!g->stages)
        return diag_set(l->d, "out of memory");
    for (unsigned i = 0; i < stages->n; i++) {
        g->n_stages++;
        if (load_stage(l, stages->keys[i], stages->items[i], &g->stages[i]))
            return -1;
    }
    return check_references(l);
}

int graph_load(graph *g, const char *path, const char *text, diag *d)
{
    memset(g, 0, sizeof *g);
    g->path = strdup(path);
    const char *slash = strrchr(path, '/');
    g->dir = slash ? strndup(path, (size_t)(slash - path + (slash == path))) : strdup(".");
    if (!g->path || !g->dir)
        return diag_set(d, "out of memory");
    if (ydoc_load(&g->doc, path, text, d))
        return -1;
    loader l = { g, &g->doc, d };
    if (load_top(&l))
        return -1;
    unsigned *order = malloc(g->n_stages * sizeof *order);
    if (!order)
        return diag_set(d, "out of memory");
    int rc = graph_topo_order(g, order, d);
    free(order);
    return rc;
}

static void free_strings(char **v, unsigned n)
{
    for (unsigned i = 0; i < n; i++)
        free(v[i]);
    free(v);
}

void graph_free(graph *g)
{
    for (unsigned i = 0; i < g->n_stages; i++) {
        graph_stage *s = &g->stages[i];
        free(s->name);
        free(s->plugin);
        free(s->path);
        for (unsigned k = 0; k < s->n_inputs; k++)
            free(s->inputs[k].from);
        free(s->inputs);
        free_strings(s->query.on_marker, s->query.n_on_marker);
        for (unsigned k = 0; k < s->fit.n_classes; k++) {
            free(s->fit.classes[k].name);
            free_strings(s->fit.classes[k].labels, s->fit.classes[k].n_labels);
        }
        free(s->fit.classes);
    }
    free(g->stages);
    free(g->name);
    free(g->path);
    free(g->dir);
    ydoc_free(&g->doc);
    memset(g, 0, sizeof *g);
}

int graph_find(const graph *g, const char *name)
{
    for (unsigned i = 0; i < g->n_stages; i++)
        if (g->stages[i].name && strcmp(g->stages[i].name, name) == 0)
            return (int)i;
    return -1;
}
