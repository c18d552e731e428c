/* item_queue: a lock-free queue of variable-sized items between exactly one producer thread
 * (the run loop) and one consumer thread (a writer). The producer never waits: when there is
 * no room, reserve returns NULL and the caller decides what is lost. Memory is allocated once,
 * in item_queue_init. */
#ifndef WEFT_ITEM_QUEUE_H
#define WEFT_ITEM_QUEUE_H

#include <stdatomic.h>
#include <stddef.h>
#include <stdint.h>

typedef struct item_queue {
    uint8_t *mem;
    uint64_t capacity;          /* bytes, a multiple of 16 */
    _Atomic uint64_t head;      /* bytes ever committed (written by the producer) */
    _Atomic uint64_t tail;      /* bytes ever released (written by the consumer) */
    uint64_t reserved_head;     /* producer only: head after the reserved item */
    uint64_t front_bytes;       /* consumer only: size of the item front() returned */
} item_queue;

/* Room for `bytes` of items (each item costs its size rounded up to 16, plus 16). */
int item_queue_init(item_queue *q, size_t bytes);
void item_queue_free(item_queue *q);

/* Producer: room for an item of `size` bytes (16-byte aligned), or NULL if the queue is full.
 * Fill it, then item_queue_commit() makes it visible. */
void *item_queue_reserve(item_queue *q, size_t size);
void item_queue_commit(item_queue *q);

/* Consumer: the oldest item and its size, or NULL when empty; item_queue_release() frees it. */
const void *item_queue_front(item_queue *q, size_t *size);
void item_queue_release(item_queue *q);

#endif
