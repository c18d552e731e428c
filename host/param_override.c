/* param_override: parameter maps rebuilt with some values replaced; the graph's own nodes are
 * borrowed, not copied, and restored untouched. */
#include "param_override.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static int parse_one(param_override *po, const char *spec, unsigned k, int *stage, diag *d)
{
    const char *dot = strchr(spec, '.'), *eq = strchr(spec, '=');
    if (!dot || !eq || dot > eq || dot == spec || eq == dot + 1)
        return diag_set(d, "--calibrate '%s': write STAGE.PARAM=VALUE, e.g. eeg.trials=40",
                        spec);
    char name[80];
    snprintf(name, sizeof name, "%.*s", (int)(dot - spec), spec);
    *stage = graph_find(po->g, name);
    if (*stage < 0)
        return diag_set(d, "--calibrate '%s': the graph has no stage '%s'", spec, name);
    ynode *key = &po->keys[k];
    key->kind = YNODE_SCALAR;
    key->text = strndup(dot + 1, (size_t)(eq - dot - 1));
    if (!key->text)
        return diag_set(d, "out of memory");
    char where[128];
    snprintf(where, sizeof where, "--calibrate %s", name);
    if (ydoc_load(&po->values[k], where, eq + 1, d))
        return -1;
    if (!po->values[k].root)
        return diag_set(d, "--calibrate '%s': no value after '='", spec);
    return 0;
}

/* The stage's map with `key` set to `value` (replacing an entry of the same name). */
static int put_value(param_override *po, unsigned stage, ynode *key, const ynode *value,
                     diag *d)
{
    ynode *m = po->merged[stage];
    if (!m) {
        const ynode *own = po->saved[stage];
        unsigned n = own ? own->n : 0;
        m = po->merged[stage] = calloc(1, sizeof *m);
        if (!m || !(m->keys = calloc(n + po->n + 1, sizeof *m->keys)) ||
            !(m->items = calloc(n + po->n + 1, sizeof *m->items)))
            return diag_set(d, "out of memory");
        m->kind = YNODE_MAP;
        if (own) {
            m->mark = own->mark;
            memcpy(m->keys, own->keys, n * sizeof *m->keys);
            memcpy(m->items, own->items, n * sizeof *m->items);
            m->n = n;
        }
    }
    unsigned i = 0;
    while (i < m->n && strcmp(m->keys[i]->text, key->text) != 0)
        i++;
    m->keys[i] = key;
    m->items[i] = (ynode *)value;
    if (i == m->n)
        m->n++;
    return 0;
}

int param_override_apply(param_override *po, graph *g, char *const *specs, unsigned n,
                         diag *d)
{
    memset(po, 0, sizeof *po);
    po->g = g;
    po->n = n;
    po->saved = calloc(g->n_stages + 1, sizeof *po->saved);
    po->merged = calloc(g->n_stages + 1, sizeof *po->merged);
    po->values = calloc(n + 1, sizeof *po->values);
    po->keys = calloc(n + 1, sizeof *po->keys);
    if (!po->saved || !po->merged || !po->values || !po->keys)
        return diag_set(d, "out of memory");
    for (unsigned i = 0; i < g->n_stages; i++)
        po->saved[i] = g->stages[i].params;
    for (unsigned k = 0; k < n; k++) {
        int stage = -1;
        if (parse_one(po, specs[k], k, &stage, d) ||
            put_value(po, (unsigned)stage, &po->keys[k], po->values[k].root, d))
            return -1;
        g->stages[stage].params = po->merged[stage];
    }
    return 0;
}

void param_override_undo(param_override *po)
{
    for (unsigned i = 0; po->g && i < po->g->n_stages; i++) {
        po->g->stages[i].params = po->saved[i];
        if (po->merged && po->merged[i]) {
            free(po->merged[i]->keys);
            free(po->merged[i]->items);
            free(po->merged[i]);
        }
    }
    for (unsigned k = 0; po->values && k < po->n; k++)
        ydoc_free(&po->values[k]);
    for (unsigned k = 0; po->keys && k < po->n; k++)
        free(po->keys[k].text);
    free(po->saved);
    free(po->merged);
    free(po->values);
    free(po->keys);
    memset(po, 0, sizeof *po);
}
