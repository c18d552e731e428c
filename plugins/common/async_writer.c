/* async_writer: SPSC byte ring + writer thread. The producer only does two atomic loads, a
 * memcpy and an atomic store per line, and posts a semaphore, which never blocks. */
#include "async_writer.h"

#include <errno.h>
#include <fcntl.h>
#include <pthread.h>
#include <semaphore.h>
#include <stdatomic.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

struct async_writer {
    char *ring;
    size_t capacity;
    _Atomic size_t head;        /* bytes ever queued (producer) */
    _Atomic size_t tail;        /* bytes ever written (writer thread) */
    _Atomic int stopping;
    _Atomic int failed;
    _Atomic uint64_t dropped;
    int fd, own_fd;
    sem_t wake;
    pthread_t thread;
    char error[256];
    char *path;
};

static int write_all(async_writer *w, const char *p, size_t n)
{
    while (n > 0) {
        ssize_t k = write(w->fd, p, n);
        if (k < 0 && errno == EINTR)
            continue;
        if (k <= 0) {
            snprintf(w->error, sizeof w->error, "cannot write to %s: %s", w->path,
                     k < 0 ? strerror(errno) : "no progress");
            atomic_store(&w->failed, 1);
            return -1;
        }
        p += k;
        n -= (size_t)k;
    }
    return 0;
}

/* Drain what is queued; returns -1 after an I/O error. */
static int drain(async_writer *w)
{
    size_t head = atomic_load_explicit(&w->head, memory_order_acquire);
    size_t tail = atomic_load_explicit(&w->tail, memory_order_relaxed);
    while (tail != head) {
        size_t at = tail % w->capacity, n = head - tail;
        if (n > w->capacity - at)
            n = w->capacity - at;
        if (write_all(w, w->ring + at, n))
            return -1;
        tail += n;
        atomic_store_explicit(&w->tail, tail, memory_order_release);
    }
    return 0;
}

static void *writer_main(void *arg)
{
    async_writer *w = arg;
    for (;;) {
        sem_wait(&w->wake);
        if (!atomic_load(&w->failed) && drain(w))
            continue; /* keep consuming posts so the producer sees `failed` */
        if (atomic_load(&w->stopping)) {
            if (!atomic_load(&w->failed))
                drain(w);
            return NULL;
        }
    }
}

async_writer *async_writer_open(const char *path, size_t capacity, char *why, size_t why_size)
{
    async_writer *w = calloc(1, sizeof *w);
    if (!w || !(w->ring = malloc(capacity)) || !(w->path = strdup(path))) {
        snprintf(why, why_size, "out of memory for a %zu-byte output buffer", capacity);
        if (w)
            free(w->ring);
        free(w);
        return NULL;
    }
    w->capacity = capacity;
    if (strcmp(path, "-") == 0) {
        w->fd = STDOUT_FILENO;
    } else {
        w->fd = open(path, O_WRONLY | O_CREAT | O_TRUNC | O_CLOEXEC, 0644);
        w->own_fd = 1;
    }
    if (w->fd < 0) {
        snprintf(why, why_size, "cannot open %s for writing: %s", path, strerror(errno));
        goto fail;
    }
    if (sem_init(&w->wake, 0, 0)) {
        snprintf(why, why_size, "cannot create a semaphore: %s", strerror(errno));
        goto fail;
    }
    if (pthread_create(&w->thread, NULL, writer_main, w)) {
        snprintf(why, why_size, "cannot start the writer thread");
        sem_destroy(&w->wake);
        goto fail;
    }
    return w;
fail:
    if (w->own_fd && w->fd >= 0)
        close(w->fd);
    free(w->ring);
    free(w->path);
    free(w);
    return NULL;
}

int async_writer_put(async_writer *w, const char *bytes, size_t n)
{
    if (atomic_load_explicit(&w->failed, memory_order_relaxed))
        return -1;
    size_t head = atomic_load_explicit(&w->head, memory_order_relaxed);
    size_t tail = atomic_load_explicit(&w->tail, memory_order_acquire);
    if (n > w->capacity - (head - tail)) {
        atomic_fetch_add(&w->dropped, 1);
        return -1;
    }
    size_t at = head % w->capacity, first = w->capacity - at;
    if (first > n)
        first = n;
    memcpy(w->ring + at, bytes, first);
    memcpy(w->ring, bytes + first, n - first);
    atomic_store_explicit(&w->head, head + n, memory_order_release);
    sem_post(&w->wake);
    return 0;
}

const char *async_writer_error(const async_writer *w)
{
    if (!w)
        return NULL;
    return atomic_load(&((async_writer *)w)->failed) ? w->error : NULL;
}

uint64_t async_writer_dropped(const async_writer *w)
{
    if (!w)
        return 0;
    return atomic_load(&((async_writer *)w)->dropped);
}

int async_writer_close(async_writer *w)
{
    if (!w)
        return 0;
    atomic_store(&w->stopping, 1);
    sem_post(&w->wake);
    pthread_join(w->thread, NULL);
    sem_destroy(&w->wake);
    int failed = atomic_load(&w->failed);
    if (w->own_fd && close(w->fd) && !failed)
        failed = 1;
    free(w->ring);
    free(w->path);
    free(w);
    return failed ? -1 : 0;
}
