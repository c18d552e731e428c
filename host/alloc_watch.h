/* alloc_watch: counts the process's heap allocations while switched on -- how the conformance
 * checker shows that a stage's process and query do not allocate, and that destroy frees
 * what init took. */
#ifndef WEFT_ALLOC_WATCH_H
#define WEFT_ALLOC_WATCH_H

#include <stdint.h>

typedef struct alloc_counts {
    uint64_t allocs;            /* malloc, calloc, the aligned ones, realloc(NULL, n) */
    uint64_t frees;             /* free(p != NULL), realloc(p, 0) */
} alloc_counts;

/* 0 in a sanitizer build: the sanitizer owns malloc there, and replacing it would blind it. */
int alloc_watch_available(void);

/* Count from now on (the counts are not reset) / stop counting. Pairs nest: counting goes on
 * until every start has had its stop. */
void alloc_watch_start(void);
void alloc_watch_stop(void);
alloc_counts alloc_watch_counts(void);
void alloc_watch_reset(void);

/* Sanitizer build: run LeakSanitizer now (its report goes to stderr); 1 if it found leaks,
 * 0 if not, -1 where there is no LeakSanitizer. */
int alloc_watch_leak_check(void);

#endif
