/* host_services: error and log callbacks for stages; their text lands in the stage's node. */
#include "host_services.h"

#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* Logging from a stage is for sparse notices; a stage that logs every block would flood the
 * terminal and stall the loop on a slow one, so each stage gets this many lines. */
#define LOG_LINES_PER_STAGE 50

static node *node_of(const weft_host *h) { return (node *)h->ctx; }

static void record_error(const weft_host *h, const char *param, const char *fmt, va_list ap)
{
    node *n = node_of(h);
    if (n->error[0]) /* the first reason is the one closest to the cause */
        return;
    vsnprintf(n->error, sizeof n->error, fmt, ap);
    n->error_param = param;
}

static void host_error(const weft_host *h, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    record_error(h, NULL, fmt, ap);
    va_end(ap);
}

static void host_param_error(const weft_host *h, const char *param, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    record_error(h, param, fmt, ap);
    va_end(ap);
}

static void host_log(const weft_host *h, int level, const char *fmt, ...)
{
    node *n = node_of(h);
    if (n->log_count++ >= LOG_LINES_PER_STAGE) {
        if (n->log_count == LOG_LINES_PER_STAGE + 1)
            fprintf(stderr, "weft: stage '%s': further messages suppressed\n", h->stage_name);
        return;
    }
    const char *tag = level >= WEFT_LOG_WARN ? "warning: " : "";
    if (level == WEFT_LOG_DEBUG && !getenv("WEFT_DEBUG"))
        return;
    char text[512];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(text, sizeof text, fmt, ap);
    va_end(ap);
    fprintf(stderr, "weft: stage '%s': %s%s\n", h->stage_name, tag, text);
}

static int host_watch_fd(const weft_host *h, int fd, uint32_t events)
{
    pipeline *pl = node_of(h)->pl;
    if (fd < 0 || pl->n_watched == PIPELINE_WATCH_MAX) {
        host_error(h, "cannot watch descriptor %d: at most %d are polled", fd,
                   PIPELINE_WATCH_MAX);
        return WEFT_EINVAL;
    }
    pl->watched_fd[pl->n_watched] = fd;
    pl->watched_events[pl->n_watched++] = events;
    return WEFT_OK;
}

void host_services_bind(node *n)
{
    n->host = (weft_host){
        .abi_major = WEFT_ABI_MAJOR,
        .abi_minor = WEFT_ABI_MINOR,
        .ctx = n,
        .stage_name = n->def->name,
        .graph_dir = n->pl->g->dir,
        .error = host_error,
        .log = host_log,
        .param_error = host_param_error,
        .watch_fd = host_watch_fd,
        .flags = n->pl->opt.check_only ? WEFT_HOST_CHECK_ONLY : 0,
    };
}
