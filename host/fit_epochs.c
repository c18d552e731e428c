/* fit_epochs: labelled markers -> epochs -> windows, by the same index rule as the queries, so
 * a readout is fitted on exactly the windows an on_marker query would give it. */
#include "fit_epochs.h"

#include <stdlib.h>
#include <string.h>

#include "query_plan.h"

static int class_of(const graph_fit *f, const char *label)
{
    for (unsigned c = 0; c < f->n_classes; c++)
        for (unsigned l = 0; l < f->classes[c].n_labels; l++)
            if (!strcmp(f->classes[c].labels[l], label))
                return (int)c;
    return -1;
}

int epoch_label_mapped(const node *readout, const char *label)
{
    return class_of(&readout->def->fit, label) >= 0;
}

static int check_unique_labels(const node *r, diag *d)
{
    const graph_fit *f = &r->def->fit;
    for (unsigned c = 0; c < f->n_classes; c++)
        for (unsigned l = 0; l < f->classes[c].n_labels; l++) {
            int first = class_of(f, f->classes[c].labels[l]);
            if (first != (int)c)
                return diag_at(d, r->pl->g->path, f->classes[c].mark,
                               "stage '%s': marker label '%s' is mapped to both '%s' and "
                               "'%s' in `fit: classes`; a trial has one class",
                               r->def->name, f->classes[c].labels[l],
                               f->classes[first].name, f->classes[c].name);
        }
    return 0;
}

static int by_time(const void *a, const void *b)
{
    const fit_epoch *x = a, *y = b;
    return (x->marker_time > y->marker_time) - (x->marker_time < y->marker_time);
}

/* Does every input window of the readout, ending at `end`, lie within [0, data_seconds)? */
static int windows_fit(const node *r, double end, double data_seconds)
{
    for (unsigned k = 0; k < r->n_in; k++) {
        double rate = r->in_layouts[k].rate;
        uint64_t last = query_index_at(end, rate);
        if (last < r->win_frames[k] || last > query_index_at(data_seconds, rate))
            return 0;
    }
    return 1;
}

int epoch_list_build(epoch_list *el, const node *readout, const marker_rec *markers,
                     unsigned n_markers, double data_seconds, diag *d)
{
    memset(el, 0, sizeof *el);
    el->readout = readout->index;
    const graph_fit *f = &readout->def->fit;
    if (check_unique_labels(readout, d))
        return -1;
    el->n_classes = f->n_classes;
    el->items = calloc(n_markers + 1, sizeof *el->items);
    el->per_class = calloc(f->n_classes, sizeof *el->per_class);
    if (!el->items || !el->per_class)
        return diag_set(d, "out of memory for %u markers", n_markers);
    for (unsigned m = 0; m < n_markers; m++) {
        int c = class_of(f, markers[m].label);
        if (c < 0)
            continue;
        double end = markers[m].time + f->after;
        if (!windows_fit(readout, end, data_seconds)) {
            el->dropped++;
            continue;
        }
        el->items[el->n++] = (fit_epoch){ end, (uint32_t)c, markers[m].time };
        el->per_class[c]++;
    }
    /* Markers of several sources arrive interleaved by block; folds need time order. qsort is
     * not stable, but equal times hold equal windows, so their order does not matter. */
    qsort(el->items, el->n, sizeof *el->items, by_time);
    return 0;
}

void epoch_list_free(epoch_list *el)
{
    free(el->items);
    free(el->per_class);
    memset(el, 0, sizeof *el);
}

void epoch_cut_free(epoch_cut *c)
{
    free(c->windows);
    free(c->classes);
    free(c->class_names);
    memset(c, 0, sizeof *c);
}

int epoch_cut_make(epoch_cut *c, const epoch_list *el, const uint8_t *select,
                   const node *target, const uint32_t *frames, const stream_rec *rec,
                   diag *d)
{
    memset(c, 0, sizeof *c);
    const node *r = &target->pl->nodes[el->readout];
    const graph_fit *f = &r->def->fit;
    unsigned n = 0;
    for (unsigned e = 0; e < el->n; e++)
        n += !select || select[e];
    c->windows = calloc((size_t)n * target->n_in + 1, sizeof *c->windows);
    c->classes = calloc(n + 1, sizeof *c->classes);
    c->class_names = calloc(f->n_classes, sizeof *c->class_names);
    if (!c->windows || !c->classes || !c->class_names)
        return diag_set(d, "out of memory for %u epochs", n);
    for (unsigned k = 0; k < f->n_classes; k++)
        c->class_names[k] = f->classes[k].name;
    unsigned at = 0;
    for (unsigned e = 0; e < el->n; e++) {
        if (select && !select[e])
            continue;
        for (unsigned k = 0; k < target->n_in; k++) {
            const stream_rec *s = &rec[target->in_node[k]];
            uint64_t end = query_index_at(el->items[e].end_time, s->rate);
            if (end < frames[k] || end > s->frames)
                return diag_set(d, "stage '%s': the epoch of the marker at %.3f s needs "
                                   "samples up to %llu of '%s', which produced %llu; a stage "
                                   "upstream shortens its stream", target->def->name,
                                el->items[e].marker_time, (unsigned long long)end,
                                target->pl->nodes[target->in_node[k]].def->name,
                                (unsigned long long)s->frames);
            c->windows[(size_t)at * target->n_in + k] = (weft_window){
                s->data + (end - frames[k]) * s->channels, frames[k], s->channels, s->rate, end
            };
        }
        c->classes[at++] = el->items[e].cls;
    }
    c->ep = (weft_epochs){ .n_epochs = n, .n_in = target->n_in, .n_classes = f->n_classes,
                           .classes = c->classes, .class_names = c->class_names,
                           .windows = c->windows };
    return 0;
}
