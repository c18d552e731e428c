/* query_plan: when a readout is asked for a result -- periodically (`every`) and after marker
 * labels (`on_marker` + `after`) -- and where each query's window ends in each input. Times
 * are seconds of stream time; sample indices are derived from them by one rounding rule, never
 * by accumulating float steps, so every input of a query ends at the same instant. */
#ifndef WEFT_QUERY_PLAN_H
#define WEFT_QUERY_PLAN_H

#include <stdint.h>

#define QUERY_PENDING_MAX 256
#define QUERY_TRIGGER_MAX 64

typedef struct query_due {
    double time;
    char trigger[QUERY_TRIGGER_MAX];  /* "" for periodic */
} query_due;

typedef struct query_plan {
    double every;               /* 0: no periodic queries */
    uint64_t next_k;            /* next periodic query is at next_k * every */
    double after;
    const char *const *labels;  /* on_marker labels (borrowed from the graph) */
    unsigned n_labels;
    double earliest;            /* no query before this time: the longest window must fit */
    query_due pending[QUERY_PENDING_MAX];  /* marker-triggered, in time order */
    unsigned n_pending;
    uint64_t dropped;           /* triggers lost: queue full or window before stream start */
} query_plan;

/* The sample index at stream time t on a stream of `rate` Hz: floor(t * rate), with a tolerance
 * of 1e-6 samples so that 0.3 s * 250 Hz is sample 75 although 0.3 is not exact in binary. */
uint64_t query_index_at(double t, double rate);

void query_plan_init(query_plan *p, double every, double after, const char *const *labels,
                     unsigned n_labels, double earliest);

/* A marker arrived; if it is one of the labels, schedule a query at time + after.
 * Returns 1 if scheduled, 0 if not a trigger, -1 if it had to be dropped. */
int query_plan_marker(query_plan *p, const char *label, double time);

/* The earliest query not yet run (periodic or triggered); returns 0 if there is none. */
int query_plan_peek(const query_plan *p, query_due *out);
void query_plan_pop(query_plan *p);

#endif
