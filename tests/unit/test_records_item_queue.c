/* The recorder's lock-free queue: items of varying sizes cross from one thread to another in
 * order and intact, across many wrap-arounds, and a full queue refuses instead of waiting. */
#include <criterion/criterion.h>
#include <pthread.h>
#include <string.h>

#include "item_queue.c"

#define ITEMS 200000u

static size_t size_of(uint32_t i) { return 4 + (i * 7919u) % 300; }

static void *consume(void *arg)
{
    item_queue *q = arg;
    uint32_t expect = 0;
    while (expect < ITEMS) {
        size_t size;
        const uint8_t *it = item_queue_front(q, &size);
        if (!it)
            continue;
        uint32_t seq;
        memcpy(&seq, it, 4);
        cr_assert_eq(seq, expect, "item %u arrived as %u", expect, seq);
        cr_assert_geq(size, size_of(seq));
        for (size_t k = 4; k < size_of(seq); k++)
            cr_assert_eq(it[k], (uint8_t)(seq + k), "item %u byte %zu", seq, k);
        item_queue_release(q);
        expect++;
    }
    return NULL;
}

Test(records_item_queue, items_cross_threads_in_order_and_intact)
{
    item_queue q;
    cr_assert_eq(item_queue_init(&q, 8192), 0);
    pthread_t t;
    pthread_create(&t, NULL, consume, &q);
    uint64_t refused = 0;
    for (uint32_t i = 0; i < ITEMS;) {
        uint8_t *it = item_queue_reserve(&q, size_of(i));
        if (!it) {
            refused++;
            continue;
        }
        memcpy(it, &i, 4);
        for (size_t k = 4; k < size_of(i); k++)
            it[k] = (uint8_t)(i + k);
        item_queue_commit(&q);
        i++;
    }
    pthread_join(t, NULL);
    item_queue_free(&q);
    cr_log_info("producer found the queue full %llu times", (unsigned long long)refused);
}

Test(records_item_queue, full_queue_refuses_without_waiting)
{
    item_queue q;
    cr_assert_eq(item_queue_init(&q, 4096), 0);
    unsigned n = 0;
    while (item_queue_reserve(&q, 100)) {
        item_queue_commit(&q);
        n++;
    }
    cr_expect_eq(n, 4096 / 128);
    cr_expect_null(item_queue_reserve(&q, 3000)); /* larger than half the ring: never fits */
    size_t size;
    cr_assert_not_null(item_queue_front(&q, &size));
    item_queue_release(&q);
    cr_expect_not_null(item_queue_reserve(&q, 100));
    item_queue_free(&q);
}
