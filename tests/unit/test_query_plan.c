/* Query timing: periodic and marker-triggered times, and the one rounding rule that maps a
 * time to a sample index on every stream. */
#include <criterion/criterion.h>

#include "query_plan.h"

Test(query_plan, index_at_is_exact_for_decimal_times)
{
    /* 0.1 * k is not exact in binary; the index must still be k * rate / 10. */
    for (uint64_t k = 0; k <= 100000; k++) {
        double t = (double)k * 0.1;
        cr_assert_eq(query_index_at(t, 250), k * 25, "k=%llu", (unsigned long long)k);
        cr_assert_eq(query_index_at(t, 1000), k * 100, "k=%llu", (unsigned long long)k);
    }
    cr_expect_eq(query_index_at(0.0039, 250), 0, "sample 0.975 floors to 0");
    cr_expect_eq(query_index_at(-1, 250), 0);
}

Test(query_plan, periodic_queries_start_when_the_longest_window_is_full)
{
    query_plan p;
    query_plan_init(&p, 0.1, 0, NULL, 0, 1.0);
    query_due q;
    cr_assert(query_plan_peek(&p, &q));
    cr_expect_float_eq(q.time, 1.0, 1e-12);
    query_plan_pop(&p);
    cr_assert(query_plan_peek(&p, &q));
    cr_expect_float_eq(q.time, 1.1, 1e-12);
    cr_expect_str_eq(q.trigger, "");
}

Test(query_plan, marker_triggers_come_after_their_delay_in_time_order)
{
    const char *labels[] = { "grip", "rest" };
    query_plan p;
    query_plan_init(&p, 0, 0.5, labels, 2, 1.0);
    cr_expect_eq(query_plan_marker(&p, "grip", 4.0), 1);
    cr_expect_eq(query_plan_marker(&p, "noise", 4.5), 0, "not a trigger label");
    cr_expect_eq(query_plan_marker(&p, "rest", 2.0), 1, "arrives late, runs first");
    cr_expect_eq(query_plan_marker(&p, "rest", 0.2), -1, "window would start before 0");
    query_due q;
    cr_assert(query_plan_peek(&p, &q));
    cr_expect_float_eq(q.time, 2.5, 1e-12);
    cr_expect_str_eq(q.trigger, "rest");
    query_plan_pop(&p);
    cr_assert(query_plan_peek(&p, &q));
    cr_expect_float_eq(q.time, 4.5, 1e-12);
    cr_expect_str_eq(q.trigger, "grip");
    query_plan_pop(&p);
    cr_expect_not(query_plan_peek(&p, &q));
    cr_expect_eq(p.dropped, 1);
}

Test(query_plan, periodic_and_triggered_interleave_by_time)
{
    const char *labels[] = { "cue" };
    query_plan p;
    query_plan_init(&p, 1.0, 0.25, labels, 1, 0.5);
    query_plan_marker(&p, "cue", 1.5); /* due 1.75 */
    double expect[] = { 1.0, 1.75, 2.0, 3.0 };
    for (int i = 0; i < 4; i++) {
        query_due q;
        cr_assert(query_plan_peek(&p, &q));
        cr_expect_float_eq(q.time, expect[i], 1e-12, "query %d", i);
        query_plan_pop(&p);
    }
}

Test(query_plan, full_queue_drops_and_counts)
{
    const char *labels[] = { "x" };
    query_plan p;
    query_plan_init(&p, 0, 0, labels, 1, 0);
    for (int i = 0; i < QUERY_PENDING_MAX; i++)
        cr_assert_eq(query_plan_marker(&p, "x", i), 1);
    cr_expect_eq(query_plan_marker(&p, "x", 1e6), -1);
    cr_expect_eq(p.dropped, 1);
}
