/* query_plan: periodic and marker-triggered query times. */
#include "query_plan.h"

#include <math.h>
#include <string.h>

uint64_t query_index_at(double t, double rate)
{
    double x = t * rate + 1e-6;
    return x <= 0 ? 0 : (uint64_t)floor(x);
}

void query_plan_init(query_plan *p, double every, double after, const char *const *labels,
                     unsigned n_labels, double earliest)
{
    memset(p, 0, sizeof *p);
    p->every = every;
    p->after = after;
    p->labels = labels;
    p->n_labels = n_labels;
    p->earliest = earliest;
    if (every > 0) {
        /* First k >= 1 whose window fits after stream start. */
        double k = ceil(earliest / every - 1e-9);
        p->next_k = k < 1 ? 1 : (uint64_t)k;
    }
}

int query_plan_marker(query_plan *p, const char *label, double time)
{
    unsigned i = 0;
    while (i < p->n_labels && strcmp(p->labels[i], label) != 0)
        i++;
    if (i == p->n_labels)
        return 0;
    double due = time + p->after;
    if (due < p->earliest - 1e-9 || p->n_pending == QUERY_PENDING_MAX) {
        p->dropped++;
        return -1;
    }
    /* Markers arrive nearly in order; insertion from the back is cheap. */
    unsigned pos = p->n_pending;
    while (pos > 0 && p->pending[pos - 1].time > due) {
        p->pending[pos] = p->pending[pos - 1];
        pos--;
    }
    p->pending[pos].time = due;
    strncpy(p->pending[pos].trigger, label, QUERY_TRIGGER_MAX - 1);
    p->pending[pos].trigger[QUERY_TRIGGER_MAX - 1] = 0;
    p->n_pending++;
    return 1;
}

/* The periodic query wins a tie, so the order does not depend on when markers arrived. */
int query_plan_peek(const query_plan *p, query_due *out)
{
    int have_periodic = p->every > 0;
    double periodic = have_periodic ? (double)p->next_k * p->every : 0;
    if (p->n_pending && (!have_periodic || p->pending[0].time < periodic)) {
        *out = p->pending[0];
        return 1;
    }
    if (!have_periodic)
        return 0;
    out->time = periodic;
    out->trigger[0] = 0;
    return 1;
}

void query_plan_pop(query_plan *p)
{
    int have_periodic = p->every > 0;
    double periodic = have_periodic ? (double)p->next_k * p->every : 0;
    if (p->n_pending && (!have_periodic || p->pending[0].time < periodic)) {
        memmove(&p->pending[0], &p->pending[1], (p->n_pending - 1) * sizeof p->pending[0]);
        p->n_pending--;
        return;
    }
    if (have_periodic)
        p->next_k++;
}
