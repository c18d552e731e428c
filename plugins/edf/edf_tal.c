/* edf_tal: parsing and writing TALs (Kemp and Olivan 2003, section 2.2.2). */
#include "edf_tal.h"

#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define NUMBER_MAX 40

static int fail_at(size_t at, size_t *bad_at, char *err, size_t size, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(err, size, fmt, ap);
    va_end(ap);
    *bad_at = at;
    return -1;
}

/* digits [ '.' digits ], ended by one of the bytes in `ends`; onsets also start with a sign
 * (the spec requires it), durations must not. */
static int read_seconds(const uint8_t *buf, size_t len, size_t *pos, int signed_, double *out,
                        const char *what, size_t *bad_at, char *err, size_t size)
{
    size_t start = *pos, p = *pos;
    char text[NUMBER_MAX + 1];
    if (signed_) {
        if (p >= len || (buf[p] != '+' && buf[p] != '-'))
            return fail_at(p, bad_at, err, size, "a TAL %s must start with '+' or '-'", what);
        p++;
    }
    size_t digits = 0;
    while (p < len && buf[p] >= '0' && buf[p] <= '9')
        p++, digits++;
    if (p < len && buf[p] == '.')
        for (p++; p < len && buf[p] >= '0' && buf[p] <= '9'; p++)
            digits++;
    if (p >= len)
        return fail_at(start, bad_at, err, size, "the TAL %s runs past the end of the "
                       "annotation signal", what);
    if (!digits || (buf[p] != EDF_TAL_ONSET && buf[p] != EDF_TAL_DURATION) ||
        p - start > NUMBER_MAX)
        return fail_at(p, bad_at, err, size, "the TAL %s is not a decimal number of seconds "
                       "followed by 0x14 or 0x15 (found byte 0x%02x)", what, buf[p]);
    memcpy(text, buf + start, p - start);
    text[p - start] = 0;
    *out = strtod(text, NULL);
    *pos = p;
    return 0;
}

static int parse_one(const uint8_t *buf, size_t len, size_t *pos, int first, double *start,
                     edf_annotation_fn fn, void *ctx, size_t *bad_at, char *err, size_t size)
{
    edf_annotation a = { 0 };
    if (read_seconds(buf, len, pos, 1, &a.onset, "onset", bad_at, err, size))
        return -1;
    if (buf[*pos] == EDF_TAL_DURATION) {
        (*pos)++;
        if (read_seconds(buf, len, pos, 0, &a.duration, "duration", bad_at, err, size))
            return -1;
        if (buf[*pos] != EDF_TAL_ONSET)
            return fail_at(*pos, bad_at, err, size, "a TAL duration must be followed by "
                           "0x14");
        a.has_duration = 1;
    }
    (*pos)++; /* the 0x14 after onset (and duration) */
    for (unsigned k = 0;; k++) {
        if (*pos >= len)
            return fail_at(*pos, bad_at, err, size, "a TAL runs past the end of the "
                           "annotation signal without its closing 0x00");
        if (buf[*pos] == 0) {
            (*pos)++;
            return 0;
        }
        size_t text_start = *pos;
        while (*pos < len && buf[*pos] != EDF_TAL_ONSET && buf[*pos] != 0)
            (*pos)++;
        if (*pos >= len || buf[*pos] == 0)
            return fail_at(text_start, bad_at, err, size, "an annotation is not ended by "
                           "0x14");
        a.text = (const char *)buf + text_start;
        a.text_len = *pos - text_start;
        (*pos)++;
        if (a.text_len == 0) {
            if (first && k == 0)
                *start = a.onset;
            continue;
        }
        int rc = fn ? fn(ctx, &a) : 0;
        if (rc)
            return rc;
    }
}

int edf_tal_parse(const uint8_t *buf, size_t len, double *record_start, edf_annotation_fn fn,
                  void *ctx, size_t *bad_at, char *err, size_t err_size)
{
    size_t pos = 0;
    *record_start = NAN;
    for (int first = 1; pos < len && buf[pos] != 0; first = 0) {
        int rc = parse_one(buf, len, &pos, first, record_start, fn, ctx, bad_at, err,
                           err_size);
        if (rc)
            return rc;
    }
    return 0;
}

int edf_tal_format_seconds(double t, int with_sign, char *out, size_t cap)
{
    char text[64];
    int n = snprintf(text, sizeof text, "%s%.9f", with_sign && t >= 0 ? "+" : "", t);
    while (n > 0 && text[n - 1] == '0')
        text[--n] = 0;
    if (n > 0 && text[n - 1] == '.')
        text[--n] = 0;
    if (!strcmp(text, "-0"))
        strcpy(text, with_sign ? "+0" : "0"), n = (int)strlen(text);
    snprintf(out, cap, "%s", text);
    return n;
}

size_t edf_tal_format(uint8_t *out, size_t cap, double onset, double duration,
                      const char *text)
{
    char on[64], dur[64];
    int n_on = edf_tal_format_seconds(onset, 1, on, sizeof on);
    int n_dur = duration > 0 ? edf_tal_format_seconds(duration, 0, dur, sizeof dur) : 0;
    size_t n_text = strlen(text);
    size_t need = (size_t)n_on + (n_dur ? (size_t)n_dur + 1 : 0) + 1 + n_text + 1 + 1;
    if (need > cap)
        return 0;
    size_t p = 0;
    memcpy(out + p, on, (size_t)n_on);
    p += (size_t)n_on;
    if (n_dur) {
        out[p++] = EDF_TAL_DURATION;
        memcpy(out + p, dur, (size_t)n_dur);
        p += (size_t)n_dur;
    }
    out[p++] = EDF_TAL_ONSET;
    for (size_t k = 0; k < n_text; k++) {
        unsigned char c = (unsigned char)text[k];
        out[p++] = c == 0x14 || c == 0x15 ? ' ' : c;
    }
    out[p++] = EDF_TAL_ONSET;
    out[p++] = 0;
    return p;
}
