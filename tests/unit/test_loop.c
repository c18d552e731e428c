/* The run loop: windows of inputs at different rates end at the same instant, queries come on
 * schedule, and the split of streams into blocks does not change any result. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "loop.h"

#define MAX_RESULTS 4096

typedef struct collected {
    double time[MAX_RESULTS];
    double values[MAX_RESULTS][10];
    char trigger[MAX_RESULTS][16];
    unsigned n;
} collected;

static void on_result(void *ctx, const node *n, const weft_result *r)
{
    (void)n;
    collected *c = ctx;
    cr_assert_lt(c->n, MAX_RESULTS);
    c->time[c->n] = r->time;
    memcpy(c->values[c->n], r->values, r->count * sizeof(double));
    strncpy(c->trigger[c->n], r->trigger ? r->trigger : "", 15);
    c->n++;
}

static const char two_rates[] =
    "weft: 1\n"
    "stages:\n"
    "  eeg: { plugin: host_ramp, params: { rate: 250, marker_every: 500, label: cue } }\n"
    "  emg: { plugin: host_ramp, params: { rate: 1000, channels: 2 } }\n"
    "  probe:\n"
    "    plugin: host_probe\n"
    "    input: [ { from: eeg, window: 1.0 }, { from: emg, window: 0.2 } ]\n"
    "    query: { every: 0.1, on_marker: [cue], after: 0.5 }\n";

static void run_graph(const char *text, uint32_t block, double duration, collected *c)
{
    setenv("WEFT_PLUGIN_PATH", WEFT_FIXTURE_DIR ":" WEFT_PLUGIN_DIR, 1);
    graph g;
    pipeline pl;
    diag d = { 0 };
    pipeline_options opt = { .block = block };
    cr_assert_eq(graph_load(&g, "t.yaml", text, &d), 0, "%s", d.msg);
    cr_assert_eq(pipeline_open(&pl, &g, &opt, &d), 0, "%s", d.msg);
    loop_options lo = { .duration = duration };
    loop_hooks hooks = { .ctx = c, .on_result = on_result };
    loop_stats st;
    memset(c, 0, sizeof *c);
    cr_assert_eq(loop_run(&pl, &lo, &hooks, &st, &d), 0, "%s", d.msg);
    cr_expect_eq(st.results, c->n);
    loop_stats_free(&st);
    pipeline_close(&pl);
    graph_free(&g);
}

Test(loop, windows_of_two_rates_end_at_the_query_time)
{
    collected *c = malloc(sizeof *c);
    run_graph(two_rates, 0, 10.0, c);
    unsigned periodic = 0;
    for (unsigned i = 0; i < c->n; i++) {
        double t = c->time[i], *v = c->values[i];
        double end0 = round(t * 250), end1 = round(t * 1000);
        cr_assert_eq(v[0], end0, "result %u at %.3f s: eeg window ends at %g", i, t, v[0]);
        cr_assert_eq(v[1], 250);
        cr_assert_eq(v[2], end0 - 250, "first eeg sample of the window");
        cr_assert_eq(v[3], end0 - 1, "last eeg sample is the one before the query time");
        cr_assert_eq(v[5], end1, "emg window ends at the same instant");
        cr_assert_eq(v[6], 200);
        cr_assert_eq(v[8], end1 - 1);
        if (i > 0)
            cr_assert_geq(t, c->time[i - 1], "times never decrease");
        periodic += c->trigger[i][0] == 0;
    }
    /* Periodic queries at 1.0, 1.1 ... 10.0 s: the first full 1 s window ends at 1.0 s. */
    cr_expect_eq(periodic, 91);
    /* Cue markers at samples 500, 1000 ... 2000 (2, 4, 6, 8 s), each queried 0.5 s later;
     * the one at 10 s is due at 10.5 s, after the end. */
    cr_expect_eq(c->n - periodic, 4);
    free(c);
}

Test(loop, marker_query_uses_the_sample_after_the_delay)
{
    collected *c = malloc(sizeof *c);
    run_graph(two_rates, 0, 5.0, c);
    int seen = 0;
    for (unsigned i = 0; i < c->n; i++) {
        if (strcmp(c->trigger[i], "cue") != 0)
            continue;
        cr_expect_float_eq(c->time[i], 2.5 + 2.0 * seen, 1e-9);
        cr_expect_eq(c->values[i][0], 625 + 500 * seen);
        seen++;
    }
    cr_expect_eq(seen, 2);
    free(c);
}

Test(loop, block_size_does_not_change_results)
{
    collected *a = malloc(sizeof *a), *b = malloc(sizeof *b);
    run_graph(two_rates, 1, 6.0, a);
    uint32_t blocks[] = { 7, 64, 1000 };
    for (unsigned k = 0; k < 3; k++) {
        run_graph(two_rates, blocks[k], 6.0, b);
        cr_assert_eq(a->n, b->n, "block %u: %u vs %u results", blocks[k], a->n, b->n);
        cr_assert(memcmp(a->time, b->time, a->n * sizeof(double)) == 0, "block %u", blocks[k]);
        cr_assert(memcmp(a->values, b->values, sizeof a->values[0] * a->n) == 0, "block %u",
                  blocks[k]);
    }
    free(a);
    free(b);
}

Test(loop, synthetic_study_is_identical_for_any_block_size)
{
    static const char text[] =
        "weft: 1\n"
        "stages:\n"
        "  eeg: { plugin: synthetic, params: { channels: 8, rate: 250, seed: 3 } }\n"
        "  emg: { plugin: synthetic, params: { signal: emg, channels: 2, rate: 1000, seed: 3,"
        " markers: false } }\n"
        "  probe:\n"
        "    plugin: host_probe\n"
        "    input: [ { from: eeg, window: 1.0 }, { from: emg, window: 0.2 } ]\n"
        "    query: { every: 0.25, on_marker: [grip, rest], after: 1.0 }\n";
    collected *a = malloc(sizeof *a), *b = malloc(sizeof *b);
    run_graph(text, 1, 20.0, a);
    cr_assert_gt(a->n, 70);
    uint32_t blocks[] = { 7, 64 };
    for (unsigned k = 0; k < 2; k++) {
        run_graph(text, blocks[k], 20.0, b);
        cr_assert_eq(a->n, b->n);
        cr_assert(memcmp(a->values, b->values, sizeof a->values[0] * a->n) == 0,
                  "block %u changed a result", blocks[k]);
    }
    free(a);
    free(b);
}

Test(loop, bounded_source_ends_the_run)
{
    static const char text[] =
        "weft: 1\n"
        "stages:\n"
        "  a: { plugin: host_ramp, params: { rate: 100, frames: 1234 } }\n"
        "  probe: { plugin: host_probe, input: a, window: 0.5, query: { every: 1 } }\n";
    collected *c = malloc(sizeof *c);
    run_graph(text, 0, 0, c);
    cr_expect_eq(c->n, 12, "queries at 1 .. 12 s; 12.34 s of data");
    cr_expect_eq(c->values[c->n - 1][3], 1199);
    free(c);
}
