/* Swapping stages of a running graph: no sample is lost, a filter's replacement is warmed up
 * on recent input so its very first output is settled, and a bad swap leaves the old stage
 * running. */
#include <criterion/criterion.h>
#include <stdlib.h>
#include <string.h>

#include "loop.h"
#include "swap.h"

#define MAX_RESULTS 1024

typedef struct swap_test {
    pipeline *pl;
    double at;                  /* swap once the source passes this stream time */
    const char *stage, *plugin, *params;
    int done, rc;
    swap_report rep;
    diag d;
    unsigned n;
    double end[MAX_RESULTS], last[MAX_RESULTS];
} swap_test;

static int between(void *ctx, diag *d)
{
    (void)d;
    swap_test *t = ctx;
    const node *src = &t->pl->nodes[0];
    if (!t->done && (double)src->produced / src->out.rate >= t->at) {
        t->done = 1;
        t->rc = swap_stage(t->pl, t->stage, t->plugin, t->params, &t->rep, &t->d);
    }
    return 0;
}

static void on_result(void *ctx, const node *n, const weft_result *r)
{
    (void)n;
    swap_test *t = ctx;
    cr_assert_lt(t->n, MAX_RESULTS);
    t->end[t->n] = r->values[0];
    t->last[t->n] = r->values[3];
    t->n++;
}

static const char graph_text[] =
    "weft: 1\n"
    "stages:\n"
    "  amp: { plugin: host_ramp, params: { rate: 250 } }\n"
    "  sum: { plugin: host_movsum, input: amp, params: { length: 10 } }\n"
    "  probe: { plugin: host_probe, input: sum, window: 0.04, query: { every: 0.1 } }\n";

static void run_with_swap(swap_test *t, uint32_t block)
{
    setenv("WEFT_PLUGIN_PATH", WEFT_FIXTURE_DIR, 1);
    static graph g;
    static pipeline pl;
    diag d = { 0 };
    pipeline_options opt = { .block = block, .swap_warmup = 2.0 };
    cr_assert_eq(graph_load(&g, "t.yaml", graph_text, &d), 0, "%s", d.msg);
    cr_assert_eq(pipeline_open(&pl, &g, &opt, &d), 0, "%s", d.msg);
    t->pl = &pl;
    loop_options lo = { .duration = 8.0 };
    loop_hooks hooks = { .ctx = t, .on_result = on_result, .between_rounds = between };
    loop_stats st;
    cr_assert_eq(loop_run(&pl, &lo, &hooks, &st, &d), 0, "%s", d.msg);
    loop_stats_free(&st);
    pipeline_close(&pl);
    graph_free(&g);
}

Test(swap, filter_swap_loses_no_sample_and_is_warm_from_its_first_output)
{
    swap_test *t = calloc(1, sizeof *t);
    t->at = 3.0;
    t->stage = "sum";
    t->params = "{length: 20}";
    run_with_swap(t, 7);
    cr_assert_eq(t->rc, 0, "%s", t->d.msg);
    cr_expect_geq(t->rep.index, 750);
    cr_expect_eq(t->rep.warmup_frames, 500, "2 s at 250 Hz");
    cr_assert_eq(t->n, 80, "queries at 0.1 .. 8.0 s");
    /* Input sample n is n; a moving sum of L ending at n is L*n - L*(L-1)/2. Every result
     * is exactly one of the two, switching at the swap index, with no gap and no transient. */
    for (unsigned i = 0; i < t->n; i++) {
        double m = t->end[i] - 1;
        double want = m < (double)t->rep.index ? 10 * m - 45 : 20 * m - 190;
        cr_assert_eq(t->last[i], want, "result %u (sample %g, swap at %llu)", i, m,
                     (unsigned long long)t->rep.index);
    }
    free(t);
}

Test(swap, refused_swap_keeps_the_old_stage)
{
    swap_test *t = calloc(1, sizeof *t);
    t->at = 2.0;
    t->stage = "sum";
    t->params = "{length: 5000}";
    run_with_swap(t, 64);
    cr_assert_eq(t->rc, -1);
    cr_expect(strstr(t->d.msg, "length = 5000 is out of range"), "got: %s", t->d.msg);
    for (unsigned i = 0; i < t->n; i++)
        cr_assert_eq(t->last[i], 10 * (t->end[i] - 1) - 45, "the old filter kept running");
    free(t);
}

Test(swap, sources_cannot_be_swapped)
{
    swap_test *t = calloc(1, sizeof *t);
    t->at = 1.0;
    t->stage = "amp";
    t->params = "{rate: 500}";
    run_with_swap(t, 64);
    cr_assert_eq(t->rc, -1);
    cr_expect(strstr(t->d.msg, "only filters and readouts can be swapped"), "got: %s",
              t->d.msg);
    free(t);
}

Test(swap, unknown_stage_and_plugin_are_named)
{
    swap_test *t = calloc(1, sizeof *t);
    t->at = 1.0;
    t->stage = "nosuch";
    run_with_swap(t, 64);
    cr_expect(strstr(t->d.msg, "no stage 'nosuch'"), "got: %s", t->d.msg);
    memset(t, 0, sizeof *t);
    t->at = 1.0;
    t->stage = "sum";
    t->plugin = "host_probe";
    run_with_swap(t, 64);
    cr_expect(strstr(t->d.msg, "plugin 'host_probe' is not a filter"), "got: %s", t->d.msg);
    free(t);
}

/* A readout swap -- new weights after a re-fit, the everyday case -- takes effect at the next
 * query and keeps the class names; the results before it are untouched. */
typedef struct readout_swap {
    pipeline *pl;
    int done, rc;
    diag d;
    unsigned n;
    double time[256], grip[256];
} readout_swap;

static int swap_weights_at_5s(void *ctx, diag *d)
{
    (void)d;
    readout_swap *t = ctx;
    const node *src = &t->pl->nodes[0];
    if (!t->done && src->produced >= 5 * 250) {
        swap_report rep;
        t->done = 1;
        /* Mirror the classes: the same features now favour the other class. */
        t->rc = swap_stage(t->pl, "intent", NULL,
                           "{weights: [[0, 1], [1, 0]], bias: [0, 0]}", &rep, &t->d);
    }
    return 0;
}

static void keep_grip(void *ctx, const node *n, const weft_result *r)
{
    (void)n;
    readout_swap *t = ctx;
    cr_assert_lt(t->n, 256);
    t->time[t->n] = r->time;
    t->grip[t->n++] = r->values[1];
}

Test(swap, readout_swap_takes_effect_at_the_next_query)
{
    /* Channel 1 is channel 0 (a ramp) times 3, so its log-variance is larger by exactly
     * log 9: with identity weights P(grip) = 9/10 (softmax of the two scores), with the
     * mirrored weights swapped in it is 1/10. */
    static const char text[] =
        "weft: 1\n"
        "stages:\n"
        "  amp: { plugin: host_ramp, params: { rate: 250, channels: 2 } }\n"
        "  scale: { plugin: spatial, input: amp, params: { mode: matrix, weights: [[1, 0], [0, 3]] } }\n"
        "  intent:\n"
        "    plugin: logvar_lda\n"
        "    input: scale\n"
        "    window: 1.0\n"
        "    query: { every: 0.5 }\n"
        "    params: { classes: [rest, grip], weights: [[1, 0], [0, 1]], bias: [0, 0] }\n";
    setenv("WEFT_PLUGIN_PATH", WEFT_FIXTURE_DIR ":" WEFT_PLUGIN_DIR, 1);
    static graph g;
    static pipeline pl;
    diag d = { 0 };
    pipeline_options opt = { .swap_warmup = 2.0 };
    cr_assert_eq(graph_load(&g, "t.yaml", text, &d), 0, "%s", d.msg);
    cr_assert_eq(pipeline_open(&pl, &g, &opt, &d), 0, "%s", d.msg);
    readout_swap *t = calloc(1, sizeof *t);
    t->pl = &pl;
    loop_options lo = { .duration = 10.0 };
    loop_hooks hooks = { .ctx = t, .on_result = keep_grip, .between_rounds = swap_weights_at_5s };
    loop_stats st;
    cr_assert_eq(loop_run(&pl, &lo, &hooks, &st, &d), 0, "%s", d.msg);
    cr_assert_eq(t->rc, 0, "%s", t->d.msg);
    cr_assert_eq(t->n, 19, "queries at 1.0 .. 10.0 s, none lost to the swap");
    for (unsigned i = 0; i < t->n; i++) {
        /* The query at 5.0 s runs in the round that brings sample 1250, before the swap. */
        double want = t->time[i] <= 5.0 + 1e-9 ? 0.9 : 0.1;
        cr_assert_float_eq(t->grip[i], want, 1e-9, "result at %.1f s: P(grip) %g", t->time[i],
                           t->grip[i]);
    }
    cr_expect_str_eq(pl.nodes[2].out.labels[1], "grip", "class names kept");
    loop_stats_free(&st);
    pipeline_close(&pl);
    graph_free(&g);
    free(t);
}
