/* ring: mirrored ring buffer of interleaved frames. */
#include "ring.h"

#include <stdlib.h>
#include <string.h>

int ring_init(ring *r, uint32_t capacity, uint32_t channels)
{
    memset(r, 0, sizeof *r);
    if (capacity == 0 || channels == 0 || (uint64_t)capacity * 2 * channels > SIZE_MAX / 4 ||
        (uint64_t)capacity * 2 * channels > (1ull << 32))
        return -1;
    r->data = calloc((size_t)capacity * 2 * channels, sizeof *r->data);
    if (!r->data)
        return -1;
    r->capacity = capacity;
    r->channels = channels;
    return 0;
}

void ring_free(ring *r)
{
    free(r->data);
    memset(r, 0, sizeof *r);
}

void ring_push(ring *r, const float *frames, uint32_t n_frames)
{
    const size_t ch = r->channels;
    /* Only the newest `capacity` frames can survive; skip the rest of an oversized block. */
    if (n_frames > r->capacity) {
        frames += (size_t)(n_frames - r->capacity) * ch;
        r->end += n_frames - r->capacity;
        n_frames = r->capacity;
    }
    uint32_t slot = (uint32_t)(r->end % r->capacity);
    while (n_frames > 0) {
        uint32_t run = r->capacity - slot;
        if (run > n_frames)
            run = n_frames;
        size_t bytes = (size_t)run * ch * sizeof(float);
        memcpy(r->data + (size_t)slot * ch, frames, bytes);
        memcpy(r->data + ((size_t)slot + r->capacity) * ch, frames, bytes);
        frames += (size_t)run * ch;
        r->end += run;
        n_frames -= run;
        slot = 0;
    }
}

const float *ring_window(const ring *r, uint64_t end_index, uint32_t frames)
{
    if (frames == 0 || frames > r->capacity || end_index > r->end || end_index < frames ||
        end_index - frames + r->capacity < r->end)
        return NULL;
    uint64_t start = end_index - frames;
    uint32_t slot = (uint32_t)(start % r->capacity);
    return r->data + (size_t)slot * r->channels;
}
