/* loop: the one single-threaded, deterministic run loop shared by run, fit and replay: pull
 * blocks from sources, push them through the graph in order, run the queries that are due,
 * hand results to sinks. Only the pacing and what is done with results differ. */
#ifndef WEFT_LOOP_H
#define WEFT_LOOP_H

#include <signal.h>

#include "latency.h"
#include "pipeline.h"

typedef struct loop_hooks {
    void *ctx;
    /* A source emitted a marker; `time` is its stream time (index / rate). */
    void (*on_marker)(void *ctx, const node *source, const weft_marker *m, double time);
    /* A readout produced a result (after it went to the sinks). */
    void (*on_result)(void *ctx, const node *readout, const weft_result *r);
    /* A stage produced a block (sources and filters). */
    void (*on_block)(void *ctx, const node *n, const weft_block *b);
    /* Between two rounds, at most every few milliseconds of wall time: the place to serve a
     * control socket or swap a stage. Return 0 to go on, 1 to stop cleanly, -1 to fail
     * (with the reason in d). */
    int (*between_rounds)(void *ctx, diag *d);
} loop_hooks;

typedef struct loop_options {
    int realtime;                   /* pace sources to the wall clock */
    double duration;                /* seconds of stream time; 0: until every source ends */
    volatile sig_atomic_t *stop;    /* set by a signal handler to stop cleanly; may be NULL */
    double service_every;           /* wall seconds between between_rounds calls (0: every
                                     * round) */
} loop_options;

typedef struct loop_stats {
    uint64_t rounds, results, dropped_triggers;
    double stream_seconds;          /* of the longest stream */
    double wall_seconds;
    latency round_us;               /* processing time per round, microseconds */
} loop_stats;

/* Run until the sources end, the duration is reached or *stop is set. Returns 0, or -1 with
 * the failing stage, its place in the file and the sample index in d. Stats are filled in
 * either way (call loop_stats_free). */
int loop_run(pipeline *pl, const loop_options *opt, const loop_hooks *hooks, loop_stats *st,
             diag *d);
void loop_stats_free(loop_stats *st);

#endif
