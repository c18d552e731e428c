/* ring: the history of one stream kept for a readout input, as a mirrored ring -- every frame
 * is stored at slot i and at i + capacity -- so any window up to the capacity is one
 * contiguous pointer and a readout never sees the wrap-around. */
#ifndef WEFT_RING_H
#define WEFT_RING_H

#include <stdint.h>

typedef struct ring {
    float *data;            /* 2 * capacity frames */
    uint32_t capacity;      /* frames */
    uint32_t channels;
    uint64_t end;           /* sample index one past the newest frame */
} ring;

/* Allocate room for `capacity` frames of `channels` channels. Returns 0 or -1 (overflow or
 * out of memory). */
int ring_init(ring *r, uint32_t capacity, uint32_t channels);
void ring_free(ring *r);

/* Append frames that continue the stream (first_index must equal r->end). */
void ring_push(ring *r, const float *frames, uint32_t n_frames);

/* The `frames` frames ending just before sample `end_index`, or NULL if they are not all in
 * the ring (not yet arrived, or already overwritten). */
const float *ring_window(const ring *r, uint64_t end_index, uint32_t frames);

#endif
