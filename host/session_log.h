/* session_log: the record of one run, as JSON lines -- which graph (and its content hash),
 * which plugin files (hash, version) with which parameter values, and at the end what
 * happened: results, stream and wall time, processing latency, errors. Written before the run
 * starts and after it ends, never from inside the loop. */
#ifndef WEFT_SESSION_LOG_H
#define WEFT_SESSION_LOG_H

#include <stdint.h>
#include <stdio.h>

#include "loop.h"

/* 64-bit FNV-1a of a file's bytes (Fowler, Noll, Vo). Identifies a version of a file; it is
 * not a cryptographic hash and does not protect against deliberate tampering. Returns 0 and
 * the hash, or -1 if the file cannot be read. */
int file_fnv1a64(const char *path, uint64_t *out);

/* Open `path` and write the start record and one record per stage. NULL on failure (d). */
FILE *session_log_open(const char *path, const pipeline *pl, diag *d);

/* Record a swap: stage, new plugin (NULL: same), the parameter text, where it took over. */
void session_log_swap(FILE *f, const char *stage, const char *plugin, const char *params,
                      uint64_t index, double time, uint64_t warmup_frames);

/* Write the end record and close. `error` is the run's message, or NULL if it went well. */
void session_log_close(FILE *f, const loop_stats *st, const char *error);

#endif
