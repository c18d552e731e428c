/* alloc_watch: malloc and friends defined in the program itself, counting while watched and
 * handing every request to glibc's allocator.
 *
 * Why here: a dlopened plugin's calls to malloc bind to the first definition in the global
 * lookup scope, which is the executable's -- so definitions in the weft program see every
 * allocation a plugin makes (-Wl,--wrap would only see the program's own calls). The
 * executable exports these because libc references them (see the check in tests). glibc
 * supports replacing malloc this way; its own strdup, fopen ... then allocate through here. */
#include "alloc_watch.h"

#include <errno.h>
#include <stdatomic.h>
#include <stddef.h>

#if defined(__SANITIZE_ADDRESS__) || defined(__SANITIZE_THREAD__)
#define ALLOC_WATCH_SANITIZED 1
#elif defined(__has_feature)
#if __has_feature(address_sanitizer) || __has_feature(memory_sanitizer) ||                     \
    __has_feature(thread_sanitizer)
#define ALLOC_WATCH_SANITIZED 1
#endif
#endif

/* The allocator is one per process, so its counters are too. */
static atomic_int watching;
static atomic_uint_fast64_t n_allocs, n_frees;

/* Nested: the destroy check watches a whole lifecycle while each call inside is watched too. */
void alloc_watch_start(void) { atomic_fetch_add(&watching, 1); }
void alloc_watch_stop(void) { atomic_fetch_sub(&watching, 1); }

void alloc_watch_reset(void)
{
    atomic_store(&n_allocs, 0);
    atomic_store(&n_frees, 0);
}

alloc_counts alloc_watch_counts(void)
{
    return (alloc_counts){ atomic_load(&n_allocs), atomic_load(&n_frees) };
}

#ifdef ALLOC_WATCH_SANITIZED

int alloc_watch_available(void) { return 0; }

/* Weak: present whenever LeakSanitizer is linked in (ASan includes it). */
extern int __lsan_do_recoverable_leak_check(void) __attribute__((weak));

int alloc_watch_leak_check(void)
{
    return __lsan_do_recoverable_leak_check ? __lsan_do_recoverable_leak_check() != 0 : -1;
}

#else

int alloc_watch_available(void) { return 1; }

int alloc_watch_leak_check(void) { return -1; }

/* glibc's allocator under its internal names (exported by libc.so.6 since glibc 2.0). */
extern void *__libc_malloc(size_t size);
extern void *__libc_calloc(size_t n, size_t size);
extern void *__libc_realloc(void *p, size_t size);
extern void __libc_free(void *p);
extern void *__libc_memalign(size_t alignment, size_t size);
extern void *__libc_valloc(size_t size);
extern void *__libc_pvalloc(size_t size);

/* Prototypes of the replacements, as glibc declares them. */
void *malloc(size_t size);
void *calloc(size_t n, size_t size);
void *realloc(void *p, size_t size);
void *reallocarray(void *p, size_t n, size_t size);
void free(void *p);
int posix_memalign(void **out, size_t alignment, size_t size);
void *aligned_alloc(size_t alignment, size_t size);
void *memalign(size_t alignment, size_t size);
void *valloc(size_t size);
void *pvalloc(size_t size);

static void count(atomic_uint_fast64_t *counter)
{
    if (atomic_load_explicit(&watching, memory_order_relaxed) > 0)
        atomic_fetch_add_explicit(counter, 1, memory_order_relaxed);
}

void *malloc(size_t size)
{
    count(&n_allocs);
    return __libc_malloc(size);
}

void *calloc(size_t n, size_t size)
{
    count(&n_allocs);
    return __libc_calloc(n, size);
}

void *realloc(void *p, size_t size)
{
    if (!p)
        count(&n_allocs);
    else if (size == 0)
        count(&n_frees);
    else { /* a resize may move: an allocation too, with the allocator's lock and page-ins */
        count(&n_allocs);
        count(&n_frees);
    }
    return __libc_realloc(p, size);
}

void *reallocarray(void *p, size_t n, size_t size)
{
    if (size && n > (size_t)-1 / size) { /* as glibc's: the product would overflow */
        errno = ENOMEM;
        return NULL;
    }
    return realloc(p, n * size);
}

void free(void *p)
{
    if (p)
        count(&n_frees);
    __libc_free(p);
}

int posix_memalign(void **out, size_t alignment, size_t size)
{
    if (alignment < sizeof(void *) || (alignment & (alignment - 1)))
        return EINVAL;
    count(&n_allocs);
    void *p = __libc_memalign(alignment, size);
    if (!p)
        return ENOMEM;
    *out = p;
    return 0;
}

void *aligned_alloc(size_t alignment, size_t size)
{
    count(&n_allocs);
    return __libc_memalign(alignment, size);
}

void *memalign(size_t alignment, size_t size)
{
    count(&n_allocs);
    return __libc_memalign(alignment, size);
}

void *valloc(size_t size)
{
    count(&n_allocs);
    return __libc_valloc(size);
}

void *pvalloc(size_t size)
{
    count(&n_allocs);
    return __libc_pvalloc(size);
}

#endif
