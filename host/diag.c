/* diag: recording one error message with its file position. */
#include "diag.h"

#include <stdio.h>
#include <string.h>

int diag_vset(diag *d, const char *prefix, const char *fmt, va_list ap)
{
    if (d->set)
        return -1;
    size_t n = 0;
    if (prefix) {
        snprintf(d->msg, sizeof d->msg, "%s", prefix);
        n = strlen(d->msg);
    }
    vsnprintf(d->msg + n, sizeof d->msg - n, fmt, ap);
    d->set = 1;
    return -1;
}

int diag_set(diag *d, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    diag_vset(d, NULL, fmt, ap);
    va_end(ap);
    return -1;
}

int diag_at(diag *d, const char *file, src_mark at, const char *fmt, ...)
{
    char prefix[512];
    if (at.line)
        snprintf(prefix, sizeof prefix, "%s:%u:%u: ", file, at.line, at.column);
    else
        snprintf(prefix, sizeof prefix, "%s: ", file);
    va_list ap;
    va_start(ap, fmt);
    diag_vset(d, prefix, fmt, ap);
    va_end(ap);
    return -1;
}

void diag_clear(diag *d)
{
    d->msg[0] = 0;
    d->set = 0;
}
