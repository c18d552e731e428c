/* result_text: bounded text building for sinks. */
#include "result_text.h"

#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

void text_printf(text_line *t, const char *fmt, ...)
{
    if (t->overflow)
        return;
    va_list ap;
    va_start(ap, fmt);
    int n = vsnprintf(t->buf + t->len, t->size - t->len, fmt, ap);
    va_end(ap);
    if (n < 0 || (size_t)n >= t->size - t->len) {
        t->overflow = 1;
        return;
    }
    t->len += (size_t)n;
}

void text_put(text_line *t, const char *s) { text_printf(t, "%s", s); }

void text_json_string(text_line *t, const char *s)
{
    text_put(t, "\"");
    for (const unsigned char *p = (const unsigned char *)s; *p; p++) {
        if (*p == '"' || *p == '\\')
            text_printf(t, "\\%c", *p);
        else if (*p < 0x20)
            text_printf(t, "\\u%04x", *p);
        else
            text_printf(t, "%c", *p);
    }
    text_put(t, "\"");
}

void text_csv_field(text_line *t, const char *s)
{
    if (!strpbrk(s, ",\"\r\n")) {
        text_put(t, s);
        return;
    }
    text_put(t, "\"");
    for (; *s; s++)
        text_printf(t, *s == '"' ? "\"\"" : "%c", *s);
    text_put(t, "\"");
}

void text_double(text_line *t, double v)
{
    char tmp[32];
    snprintf(tmp, sizeof tmp, "%.15g", v);
    if (strtod(tmp, NULL) != v)
        snprintf(tmp, sizeof tmp, "%.17g", v);
    text_put(t, tmp);
}

void text_seconds(text_line *t, double seconds)
{
    char tmp[48];
    snprintf(tmp, sizeof tmp, "%.6f", seconds);
    char *end = tmp + strlen(tmp) - 1;
    while (end > tmp && *end == '0')
        *end-- = 0;
    if (*end == '.')
        *end = 0;
    text_put(t, tmp);
}
