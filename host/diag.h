/* diag: the one error message of a failed operation, recorded where the problem is understood
 * and printed once, by the command at the top. */
#ifndef WEFT_DIAG_H
#define WEFT_DIAG_H

#include <stdarg.h>
#include <stddef.h>

#define DIAG_MAX 1024

typedef struct diag {
    char msg[DIAG_MAX];
    int set;
} diag;

/* A position in a text file, 1-based; line 0 means "no position". */
typedef struct src_mark {
    unsigned line, column;
} src_mark;

#if defined(__GNUC__)
#define DIAG_PRINTF(a, b) __attribute__((format(printf, a, b)))
#else
#define DIAG_PRINTF(a, b)
#endif

/* Record "file:line:col: message" (or "file: message" without a mark). Keeps the first
 * message if one is already set: the first explanation is the one closest to the cause.
 * Always returns -1, so callers can write `return diag_at(...)`. */
int diag_at(diag *d, const char *file, src_mark at, const char *fmt, ...) DIAG_PRINTF(4, 5);
int diag_set(diag *d, const char *fmt, ...) DIAG_PRINTF(2, 3);
int diag_vset(diag *d, const char *prefix, const char *fmt, va_list ap);
void diag_clear(diag *d);

#endif
