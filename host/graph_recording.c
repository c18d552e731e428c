/* graph_recording: rewriting a graph's sources (model and YAML tree) to play a recording. */
#include "graph_recording.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#define READER_PLUGIN "edf"
#define RECORDER_PLUGIN "recorder"

/* Nodes built here are freed by ydoc_free like parsed ones: malloc'd text, items, keys. */
static ynode *scalar(const char *text, src_mark at)
{
    ynode *n = calloc(1, sizeof *n);
    if (!n || !(n->text = strdup(text))) {
        free(n);
        return NULL;
    }
    n->kind = YNODE_SCALAR;
    n->mark = at;
    n->quoted = 1; /* a path or stream name is text, whatever it looks like */
    return n;
}

static void free_node(ynode *n);

/* Free what a node holds but keep the node itself (it is referenced from its parent). */
static void clear_node(ynode *n)
{
    for (unsigned i = 0; i < n->n; i++) {
        free_node(n->items[i]);
        if (n->keys)
            free_node(n->keys[i]);
    }
    free(n->items);
    free(n->keys);
    free(n->text);
    n->items = n->keys = NULL;
    n->text = NULL;
    n->n = 0;
}

static void free_node(ynode *n)
{
    if (!n)
        return;
    clear_node(n);
    free(n);
}

/* Make `map` (an existing node, emptied) the map { path, stream, markers }. */
static int fill_params(ynode *map, const char *file, const char *stream, int markers,
                       src_mark at)
{
    clear_node(map);
    map->kind = YNODE_MAP;
    map->mark = at;
    map->items = calloc(3, sizeof *map->items);
    map->keys = calloc(3, sizeof *map->keys);
    if (!map->items || !map->keys)
        return -1;
    const char *keys[3] = { "path", "stream", "markers" };
    const char *values[3] = { file, stream, markers ? "true" : "false" };
    for (unsigned i = 0; i < 3; i++) {
        map->keys[i] = scalar(keys[i], at);
        map->items[i] = scalar(values[i], at);
        if (!map->keys[i] || !map->items[i])
            return -1;
        map->n++;
    }
    map->items[2]->quoted = 0; /* a boolean */
    return 0;
}

static int append_entry(ynode *map, ynode *key, ynode *value)
{
    ynode **items = realloc(map->items, (map->n + 1) * sizeof *items);
    if (items)
        map->items = items;
    ynode **keys = items ? realloc(map->keys, (map->n + 1) * sizeof *keys) : NULL;
    if (!keys)
        return -1;
    map->keys = keys;
    map->keys[map->n] = key;
    map->items[map->n++] = value;
    return 0;
}

/* The stage's own map in the YAML tree: `plugin: edf` in place of plugin: or path:, and a
 * params map to hold the reader's parameters. */
static ynode *rewrite_stage_node(ynode *stage, src_mark at)
{
    for (unsigned i = 0; i < stage->n; i++) {
        ynode *key = stage->keys[i];
        if (strcmp(key->text, "plugin") && strcmp(key->text, "path"))
            continue;
        char *name = strdup("plugin"), *value = strdup(READER_PLUGIN);
        if (!name || !value) {
            free(name);
            free(value);
            return NULL;
        }
        free(key->text);
        key->text = name;
        free(stage->items[i]->text);
        stage->items[i]->text = value;
    }
    ynode *params = ynode_get(stage, "params");
    if (params)
        return params;
    ynode *key = scalar("params", at), *value = calloc(1, sizeof *value);
    if (!key || !value || append_entry(stage, key, value)) {
        free_node(key);
        free(value);
        return NULL;
    }
    value->kind = YNODE_MAP;
    return value;
}

static void free_stage(graph_stage *s)
{
    free(s->name);
    free(s->plugin);
    free(s->path);
    for (unsigned k = 0; k < s->n_inputs; k++)
        free(s->inputs[k].from);
    free(s->inputs);
    for (unsigned k = 0; k < s->query.n_on_marker; k++)
        free(s->query.on_marker[k]);
    free(s->query.on_marker);
    for (unsigned c = 0; c < s->fit.n_classes; c++) {
        for (unsigned k = 0; k < s->fit.classes[c].n_labels; k++)
            free(s->fit.classes[c].labels[k]);
        free(s->fit.classes[c].labels);
        free(s->fit.classes[c].name);
    }
    free(s->fit.classes);
}

/* Sinks feed nothing, so taking one out leaves every reference intact. */
static void remove_recorders(graph *g)
{
    unsigned kept = 0;
    for (unsigned i = 0; i < g->n_stages; i++) {
        graph_stage *s = &g->stages[i];
        if (s->plugin && !strcmp(s->plugin, RECORDER_PLUGIN)) {
            free_stage(s);
            continue;
        }
        g->stages[kept++] = *s;
    }
    g->n_stages = kept;
}

/* The readers open the file by this name whatever their working directory. */
static int absolute_path(const char *file, char *out, size_t size, diag *d)
{
    struct stat st;
    if (stat(file, &st))
        return diag_set(d, "recording '%s': %s", file, strerror(errno));
    if (!S_ISREG(st.st_mode))
        return diag_set(d, "recording '%s' is not a regular file", file);
    char cwd[4096];
    if (file[0] == '/')
        return snprintf(out, size, "%s", file) < (int)size ? 0
                                                           : diag_set(d, "path too long");
    if (!getcwd(cwd, sizeof cwd))
        return diag_set(d, "cannot find the current directory: %s", strerror(errno));
    if (snprintf(out, size, "%s/%s", cwd, file) >= (int)size)
        return diag_set(d, "recording path '%s' is too long", file);
    return 0;
}

int graph_use_recording(graph *g, const char *file, diag *d)
{
    char absolute[8192];
    if (absolute_path(file, absolute, sizeof absolute, d))
        return -1;
    ynode *stages = ynode_get(g->doc.root, "stages");
    if (!stages || stages->n != g->n_stages)
        return diag_set(d, "%s: internal: the graph's YAML tree does not match its stages",
                        g->path);
    unsigned sources = 0;
    for (unsigned i = 0; i < g->n_stages; i++) {
        graph_stage *s = &g->stages[i];
        if (s->n_inputs)
            continue;
        ynode *params = rewrite_stage_node(stages->items[i], s->mark);
        char *plugin = strdup(READER_PLUGIN);
        if (!params || !plugin || fill_params((ynode *)params, absolute, s->name, !sources,
                                              s->mark)) {
            free(plugin);
            return diag_set(d, "out of memory");
        }
        free(s->plugin);
        free(s->path);
        s->plugin = plugin;
        s->path = NULL;
        s->params = params;
        s->params_mark = s->mark;
        s->plugin_mark = s->mark;
        sources++;
    }
    if (!sources)
        return diag_at(d, g->path, (src_mark){ 0, 0 },
                       "the graph has no source stage to play the recording through");
    remove_recorders(g);
    return 0;
}
