/* item_queue: single-producer single-consumer ring of items. Each item starts with a 16-byte
 * head; an item that would not fit before the end of the ring is placed at its start, and a
 * head marked `wrap` tells the consumer to skip the unused tail. Acquire/release on head and
 * tail order the item bytes with the counters (C11 atomics, no locks). */
#include "item_queue.h"

#include <stdlib.h>
#include <string.h>

typedef struct item_head {
    uint64_t bytes;             /* whole item, head included */
    uint64_t wrap;              /* 1: skip to the ring's start */
} item_head;

#define ALIGN 16u

static uint64_t round_up(uint64_t n) { return (n + ALIGN - 1) / ALIGN * ALIGN; }

int item_queue_init(item_queue *q, size_t bytes)
{
    memset(q, 0, sizeof *q);
    q->capacity = round_up(bytes < 4096 ? 4096 : bytes);
    q->mem = aligned_alloc(ALIGN, (size_t)q->capacity);
    atomic_init(&q->head, 0);
    atomic_init(&q->tail, 0);
    return q->mem ? 0 : -1;
}

void item_queue_free(item_queue *q)
{
    free(q->mem);
    q->mem = NULL;
}

void *item_queue_reserve(item_queue *q, size_t size)
{
    uint64_t need = round_up(sizeof(item_head) + size);
    if (need > q->capacity / 2)
        return NULL;
    uint64_t head = atomic_load_explicit(&q->head, memory_order_relaxed);
    uint64_t tail = atomic_load_explicit(&q->tail, memory_order_acquire);
    uint64_t at = head % q->capacity, to_end = q->capacity - at;
    uint64_t waste = to_end < need ? to_end : 0;
    if (q->capacity - (head - tail) < need + waste)
        return NULL;
    if (waste) {
        *(item_head *)(q->mem + at) = (item_head){ waste, 1 };
        head += waste;
        at = 0;
    }
    *(item_head *)(q->mem + at) = (item_head){ need, 0 };
    q->reserved_head = head + need;
    return q->mem + at + sizeof(item_head);
}

void item_queue_commit(item_queue *q)
{
    atomic_store_explicit(&q->head, q->reserved_head, memory_order_release);
}

const void *item_queue_front(item_queue *q, size_t *size)
{
    uint64_t tail = atomic_load_explicit(&q->tail, memory_order_relaxed);
    uint64_t head = atomic_load_explicit(&q->head, memory_order_acquire);
    while (tail != head) {
        const item_head *h = (const item_head *)(q->mem + tail % q->capacity);
        if (h->wrap) {
            tail += h->bytes;
            atomic_store_explicit(&q->tail, tail, memory_order_release);
            continue;
        }
        q->front_bytes = h->bytes;
        *size = (size_t)(h->bytes - sizeof(item_head));
        return h + 1;
    }
    return NULL;
}

void item_queue_release(item_queue *q)
{
    uint64_t tail = atomic_load_explicit(&q->tail, memory_order_relaxed);
    atomic_store_explicit(&q->tail, tail + q->front_bytes, memory_order_release);
}
