/* graph_set: STAGE.PARAM=VALUE applied to the graph's YAML tree. */
#include "graph_set.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* The stage's node in the document (the graph model only keeps its params). */
static ynode *stage_node(graph *g, const char *name)
{
    ynode *stages = ynode_get(g->doc.root, "stages");
    return ynode_get(stages, name);
}

int graph_set_param(graph *g, const char *option, const char *assignment, diag *d)
{
    const char *dot = strchr(assignment, '.'), *eq = strchr(assignment, '=');
    if (!dot || !eq || dot > eq || dot == assignment || eq == dot + 1)
        return diag_set(d, "%s %s: write STAGE.PARAM=VALUE, e.g. eeg.seed=12", option, assignment);
    char stage[128], param[128];
    size_t ls = (size_t)(dot - assignment), lp = (size_t)(eq - dot - 1);
    if (ls >= sizeof stage || lp >= sizeof param)
        return diag_set(d, "%s %s: stage or parameter name too long", option, assignment);
    memcpy(stage, assignment, ls);
    stage[ls] = 0;
    memcpy(param, dot + 1, lp);
    param[lp] = 0;
    int index = graph_find(g, stage);
    ynode *sn = stage_node(g, stage);
    if (index < 0 || !sn)
        return diag_set(d, "%s %s: no stage '%s' in %s", option, assignment, stage, g->path);
    ydoc value;
    char where[300];
    snprintf(where, sizeof where, "%s %s.%s", option, stage, param);
    if (ydoc_load(&value, where, eq + 1, d))
        return -1;
    ynode *v = ydoc_take_root(&value);
    ydoc_free(&value);
    if (!v)
        return diag_set(d, "%s %s: no value after '='", option, assignment);
    ynode_unmark(v);
    ynode *params = ynode_get(sn, "params");
    if (!params) {
        ynode *map = calloc(1, sizeof *map);
        if (!map || ynode_map_set(sn, "params", map)) {
            free(map);
            ynode_free(v);
            return diag_set(d, "out of memory");
        }
        map->kind = YNODE_MAP;
        params = map;
    }
    if (params->kind != YNODE_MAP) {
        ynode_free(v);
        return diag_set(d, "%s %s: the stage's params are not a map", option, assignment);
    }
    if (ynode_map_set(params, param, v)) {
        ynode_free(v);
        return diag_set(d, "out of memory");
    }
    g->stages[index].params = params;
    return 0;
}
