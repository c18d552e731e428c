/* async_writer: how a sink writes text without blocking the run loop -- the loop copies bytes
 * into a lock-free single-producer ring, a writer thread drains it to the file. If the file
 * cannot keep up, whole lines are dropped and counted rather than stalling the loop. */
#ifndef WEFT_ASYNC_WRITER_H
#define WEFT_ASYNC_WRITER_H

#include <stddef.h>
#include <stdint.h>

typedef struct async_writer async_writer;

/* Open `path` for writing ("-" is standard output) with a ring of `capacity` bytes and start
 * the writer thread. On failure returns NULL with a reason in `why` (room for why_size). */
async_writer *async_writer_open(const char *path, size_t capacity, char *why, size_t why_size);

/* Queue n bytes (one whole line). Never blocks; returns 0, or -1 if the ring was full (the
 * line is dropped and counted) or the writer has failed (see async_writer_error). */
int async_writer_put(async_writer *w, const char *bytes, size_t n);

/* The writer's I/O error, or NULL. Both accept a NULL writer (none was opened). */
const char *async_writer_error(const async_writer *w);
uint64_t async_writer_dropped(const async_writer *w);

/* Drain everything queued, stop the thread, close the file. Returns 0 if all was written. */
int async_writer_close(async_writer *w);

#endif
