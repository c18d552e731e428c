/* edf_header: parsing and formatting EDF/BDF headers. Every field is fixed-width ASCII padded
 * with spaces (Kemp et al. 1992); the parser never reads outside the buffer it is given and
 * names the field and byte offset of the first thing that is wrong. */
#include "edf_header.h"

#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* Digital limits of the two sample widths: 16-bit EDF and 24-bit BDF two's complement. */
#define EDF_DIGITAL_MIN (-32768)
#define EDF_DIGITAL_MAX 32767
#define BDF_DIGITAL_MIN (-8388608)
#define BDF_DIGITAL_MAX 8388607
/* A data record is read whole; anything larger than this is a corrupt count, not a file. */
#define MAX_RECORD_BYTES (256u * 1024 * 1024)

/* Widths of the per-signal fields, in the order they follow each other (Kemp et al. 1992). */
static const struct {
    const char *name;
    unsigned width;
} signal_fields[] = {
    { "label", 16 },           { "transducer type", 80 }, { "physical dimension", 8 },
    { "physical minimum", 8 }, { "physical maximum", 8 }, { "digital minimum", 8 },
    { "digital maximum", 8 },  { "prefiltering", 80 },    { "samples per data record", 8 },
    { "reserved", 32 },
};
enum { F_LABEL, F_TRANSDUCER, F_UNIT, F_PMIN, F_PMAX, F_DMIN, F_DMAX, F_PREFILTER, F_SPR,
       F_RESERVED, N_SIGNAL_FIELDS };

static int fail(char *err, size_t size, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(err, size, fmt, ap);
    va_end(ap);
    return -1;
}

static const char *fixed_field_name(size_t at)
{
    if (at < EDF_AT_PATIENT) return "version";
    if (at < EDF_AT_RECORDING) return "patient identification";
    if (at < EDF_AT_START_DATE) return "recording identification";
    if (at < EDF_AT_START_TIME) return "start date";
    if (at < EDF_AT_HEADER_BYTES) return "start time";
    if (at < EDF_AT_RESERVED) return "number of header bytes";
    if (at < EDF_AT_N_RECORDS) return "reserved";
    if (at < EDF_AT_RECORD_SECONDS) return "number of data records";
    if (at < EDF_AT_N_SIGNALS) return "duration of a data record";
    return "number of signals";
}

/* Copy a field without its padding; `out` has room for width + 1. */
static void field_text(const uint8_t *buf, size_t at, unsigned width, char *out)
{
    unsigned b = 0, e = width;
    while (b < e && buf[at + b] == ' ')
        b++;
    while (e > b && buf[at + e - 1] == ' ')
        e--;
    memcpy(out, buf + at + b, e - b);
    out[e - b] = 0;
}

static int is_integer_text(const char *s)
{
    if (*s == '+' || *s == '-')
        s++;
    if (!*s)
        return 0;
    for (; *s; s++)
        if (*s < '0' || *s > '9')
            return 0;
    return 1;
}

/* Decimal numbers as EDF writers produce them: sign, digits, point, digits, an exponent. No
 * "inf", "nan" or hexadecimal, which strtod would accept. */
static int is_real_text(const char *s)
{
    int digits = 0;
    if (*s == '+' || *s == '-')
        s++;
    for (; *s >= '0' && *s <= '9'; s++)
        digits++;
    if (*s == '.')
        for (s++; *s >= '0' && *s <= '9'; s++)
            digits++;
    if (!digits)
        return 0;
    if (*s == 'e' || *s == 'E') {
        s++;
        if (*s == '+' || *s == '-')
            s++;
        if (*s < '0' || *s > '9')
            return 0;
        while (*s >= '0' && *s <= '9')
            s++;
    }
    return *s == 0;
}

typedef struct field_ref {
    size_t at;
    unsigned width;
    const char *name;
    uint32_t signal;            /* 1-based; 0 for the fixed part */
    const char *label;          /* the signal's label, when known */
} field_ref;

static int field_fail(const field_ref *f, const char *text, const char *what, char *err,
                      size_t size)
{
    if (f->signal)
        return fail(err, size, "header byte %zu (signal %u%s%s%s %s): '%s' %s", f->at,
                    f->signal, f->label ? " '" : "", f->label ? f->label : "",
                    f->label ? "'" : "", f->name, text, what);
    return fail(err, size, "header byte %zu (%s): '%s' %s", f->at, f->name, text, what);
}

static int read_integer(const uint8_t *buf, const field_ref *f, long long lo, long long hi,
                        long long *out, char *err, size_t size)
{
    char text[81];
    field_text(buf, f->at, f->width, text);
    if (!is_integer_text(text))
        return field_fail(f, text, "is not a whole number", err, size);
    long long v = strtoll(text, NULL, 10);
    if (v < lo || v > hi) {
        char what[96];
        snprintf(what, sizeof what, "is outside %lld to %lld", lo, hi);
        return field_fail(f, text, what, err, size);
    }
    *out = v;
    return 0;
}

static int read_real(const uint8_t *buf, const field_ref *f, double *out, char *err,
                     size_t size)
{
    char text[81];
    field_text(buf, f->at, f->width, text);
    double v = is_real_text(text) ? strtod(text, NULL) : NAN;
    if (!isfinite(v))
        return field_fail(f, text, "is not a number", err, size);
    *out = v;
    return 0;
}

/* Header text is printable ASCII only (Kemp et al. 1992; Kemp and Olivan 2003, 2.1.3). */
static int check_ascii(const uint8_t *buf, size_t from, size_t to, uint32_t n_signals,
                       char *err, size_t size)
{
    for (size_t at = from; at < to; at++) {
        if (buf[at] >= 32 && buf[at] <= 126)
            continue;
        if (at < EDF_FIXED_BYTES)
            return fail(err, size, "header byte %zu (%s): byte 0x%02x is not printable ASCII",
                        at, fixed_field_name(at), buf[at]);
        size_t rel = at - EDF_FIXED_BYTES, start = 0;
        for (unsigned k = 0; k < N_SIGNAL_FIELDS; k++) {
            size_t span = (size_t)signal_fields[k].width * n_signals;
            if (rel < start + span)
                return fail(err, size,
                            "header byte %zu (signal %zu %s): byte 0x%02x is not printable "
                            "ASCII", at, (rel - start) / signal_fields[k].width + 1,
                            signal_fields[k].name, buf[at]);
            start += span;
        }
    }
    return 0;
}

const uint8_t EDF_BDF_VERSION[8] = { 0xFF, 0x42, 0x49, 0x4F, 0x53, 0x45, 0x4D, 0x49 };

static int parse_version(const uint8_t *buf, edf_header *h, char *err, size_t size)
{
    if (memcmp(buf, EDF_BDF_VERSION, sizeof EDF_BDF_VERSION) == 0) {
        h->bdf = 1;
        h->sample_bytes = 3;
        return 0;
    }
    char text[9];
    if (check_ascii(buf, 0, 8, 0, err, size))
        return -1;
    field_text(buf, 0, 8, text);
    if (strcmp(text, "0") != 0)
        return fail(err, size, "header byte 0 (version): '%s' is neither '0' (EDF) nor byte "
                    "255 + the BDF letters (BDF); this is not an EDF or BDF file", text);
    h->sample_bytes = 2;
    return 0;
}

static int parse_reserved(const uint8_t *buf, edf_header *h, char *err, size_t size)
{
    const char *r = (const char *)buf + EDF_AT_RESERVED;
    if (memcmp(r, "EDF+", 4) != 0 && memcmp(r, "BDF+", 4) != 0)
        return 0; /* plain EDF, or "24BIT" in plain BDF */
    if (r[4] != 'C' && r[4] != 'D')
        return fail(err, size, "header byte %d (reserved): '%.5s' is neither %.3s+C "
                    "(continuous) nor %.3s+D (discontinuous)", EDF_AT_RESERVED, r, r, r);
    h->plus = 1;
    h->discontinuous = r[4] == 'D';
    return 0;
}

int edf_header_parse_fixed(const uint8_t *buf, size_t len, edf_header *h, char *err,
                           size_t err_size)
{
    memset(h, 0, sizeof *h);
    if (len < EDF_FIXED_BYTES)
        return fail(err, err_size, "header byte %zu: the file ends inside the %d-byte fixed "
                    "header", len, EDF_FIXED_BYTES);
    if (parse_version(buf, h, err, err_size) ||
        check_ascii(buf, EDF_AT_PATIENT, EDF_FIXED_BYTES, 0, err, err_size) ||
        parse_reserved(buf, h, err, err_size))
        return -1;
    field_text(buf, EDF_AT_PATIENT, 80, h->patient);
    field_text(buf, EDF_AT_RECORDING, 80, h->recording);
    field_text(buf, EDF_AT_START_DATE, 8, h->start_date);
    field_text(buf, EDF_AT_START_TIME, 8, h->start_time);
    long long header_bytes, n_records, n_signals;
    field_ref hb = { EDF_AT_HEADER_BYTES, 8, "number of header bytes", 0, NULL };
    field_ref nr = { EDF_AT_N_RECORDS, 8, "number of data records", 0, NULL };
    field_ref rs = { EDF_AT_RECORD_SECONDS, 8, "duration of a data record", 0, NULL };
    field_ref ns = { EDF_AT_N_SIGNALS, 4, "number of signals", 0, NULL };
    if (read_integer(buf, &hb, 0, 99999999, &header_bytes, err, err_size) ||
        read_integer(buf, &nr, -1, 99999999, &n_records, err, err_size) ||
        read_real(buf, &rs, &h->record_seconds, err, err_size) ||
        read_integer(buf, &ns, 1, EDF_MAX_SIGNALS, &n_signals, err, err_size))
        return -1;
    if (h->record_seconds < 0) {
        char text[9];
        field_text(buf, EDF_AT_RECORD_SECONDS, 8, text);
        return field_fail(&rs, text, "is negative", err, err_size);
    }
    long long expected = (long long)EDF_SIGNAL_BYTES * (n_signals + 1);
    if (header_bytes != expected) {
        char text[9], what[160];
        field_text(buf, EDF_AT_HEADER_BYTES, 8, text);
        snprintf(what, sizeof what, "does not match %lld signals, which need 256 * (%lld + 1) "
                 "= %lld bytes", n_signals, n_signals, expected);
        return field_fail(&hb, text, what, err, err_size);
    }
    h->header_bytes = (uint32_t)header_bytes;
    h->n_records = n_records;
    h->n_signals = (uint32_t)n_signals;
    return 0;
}

static size_t signal_field_at(uint32_t ns, unsigned field, uint32_t i)
{
    size_t at = EDF_FIXED_BYTES;
    for (unsigned k = 0; k < field; k++)
        at += (size_t)signal_fields[k].width * ns;
    return at + (size_t)signal_fields[field].width * i;
}

static field_ref signal_ref(const edf_header *h, unsigned field, uint32_t i)
{
    return (field_ref){ signal_field_at(h->n_signals, field, i), signal_fields[field].width,
                        signal_fields[field].name, i + 1, h->signals[i].label };
}

void edf_signal_scaling(edf_signal *s)
{
    s->gain = (s->phys_max - s->phys_min) / ((double)s->dig_max - (double)s->dig_min);
    s->offset = s->phys_min - s->gain * (double)s->dig_min;
}

static int parse_signal(const uint8_t *buf, edf_header *h, uint32_t i, char *err, size_t size)
{
    edf_signal *s = &h->signals[i];
    field_text(buf, signal_field_at(h->n_signals, F_LABEL, i), 16, s->label);
    field_text(buf, signal_field_at(h->n_signals, F_TRANSDUCER, i), 80, s->transducer);
    field_text(buf, signal_field_at(h->n_signals, F_UNIT, i), 8, s->unit);
    field_text(buf, signal_field_at(h->n_signals, F_PREFILTER, i), 80, s->prefilter);
    s->annotations = h->plus && (!strcmp(s->label, "EDF Annotations") ||
                                 !strcmp(s->label, "BDF Annotations"));
    long long lo = h->bdf ? BDF_DIGITAL_MIN : EDF_DIGITAL_MIN;
    long long hi = h->bdf ? BDF_DIGITAL_MAX : EDF_DIGITAL_MAX;
    long long dmin, dmax, spr;
    field_ref pmin = signal_ref(h, F_PMIN, i), pmax = signal_ref(h, F_PMAX, i);
    field_ref fdmin = signal_ref(h, F_DMIN, i), fdmax = signal_ref(h, F_DMAX, i);
    field_ref fspr = signal_ref(h, F_SPR, i);
    if (read_real(buf, &pmin, &s->phys_min, err, size) ||
        read_real(buf, &pmax, &s->phys_max, err, size) ||
        read_integer(buf, &fdmin, lo, hi, &dmin, err, size) ||
        read_integer(buf, &fdmax, lo, hi, &dmax, err, size) ||
        read_integer(buf, &fspr, 1, 99999999, &spr, err, size))
        return -1;
    char text[9];
    if (dmax <= dmin) {
        field_text(buf, fdmax.at, 8, text);
        return field_fail(&fdmax, text, "must be above the digital minimum", err, size);
    }
    if (s->phys_max == s->phys_min && !s->annotations) {
        field_text(buf, pmax.at, 8, text);
        return field_fail(&pmax, text, "equals the physical minimum (no scale)", err, size);
    }
    if (h->record_seconds == 0 && !s->annotations) {
        field_text(buf, EDF_AT_RECORD_SECONDS, 8, text);
        return fail(err, size, "header byte %d (duration of a data record): '%s' is only "
                    "allowed in files holding annotations alone, but signal %u '%s' holds "
                    "samples", EDF_AT_RECORD_SECONDS, text, i + 1, s->label);
    }
    s->dig_min = (int32_t)dmin;
    s->dig_max = (int32_t)dmax;
    s->samples_per_record = (uint32_t)spr;
    if (s->annotations)
        s->gain = 1, s->offset = 0;
    else
        edf_signal_scaling(s);
    s->record_offset = h->record_bytes;
    h->record_bytes += (uint64_t)spr * h->sample_bytes;
    if (h->record_bytes > MAX_RECORD_BYTES)
        return fail(err, size, "header byte %zu (signal %u samples per data record): a data "
                    "record of more than %u bytes is not plausible", fspr.at, i + 1,
                    MAX_RECORD_BYTES);
    return 0;
}

int edf_header_parse(const uint8_t *buf, size_t len, edf_header *h, char *err, size_t err_size)
{
    if (edf_header_parse_fixed(buf, len, h, err, err_size))
        return -1;
    if (len < h->header_bytes)
        return fail(err, err_size, "header byte %zu: the file ends inside the header, which "
                    "announces %u bytes for %u signals", len, h->header_bytes, h->n_signals);
    if (check_ascii(buf, EDF_FIXED_BYTES, h->header_bytes, h->n_signals, err, err_size))
        return -1;
    h->signals = calloc(h->n_signals, sizeof *h->signals);
    if (!h->signals)
        return fail(err, err_size, "out of memory for %u signal headers", h->n_signals);
    for (uint32_t i = 0; i < h->n_signals; i++)
        if (parse_signal(buf, h, i, err, err_size))
            return -1;
    return 0;
}

void edf_header_free(edf_header *h)
{
    free(h->signals);
    h->signals = NULL;
}

uint64_t edf_header_records_in(const edf_header *h, uint64_t file_size)
{
    if (h->record_bytes == 0 || file_size <= h->header_bytes)
        return 0;
    return (file_size - h->header_bytes) / h->record_bytes;
}

double edf_signal_rate(const edf_header *h, uint32_t i)
{
    if (h->record_seconds <= 0)
        return 0;
    return h->signals[i].samples_per_record / h->record_seconds;
}

/* ---- writing ----------------------------------------------------------------------------- */

int edf_format_number(double v, char text[9], double *as_read)
{
    if (!isfinite(v))
        return -1;
    for (int decimals = 7; decimals >= 0; decimals--) {
        char t[64];
        int n = snprintf(t, sizeof t, "%.*f", decimals, v);
        if (decimals > 0) { /* 1.5000 -> 1.5, 2.000 -> 2 */
            while (n > 0 && t[n - 1] == '0')
                t[--n] = 0;
            if (n > 0 && t[n - 1] == '.')
                t[--n] = 0;
        }
        if (!strcmp(t, "-0"))
            strcpy(t, "0"), n = 1;
        if (n <= 8) {
            memcpy(text, t, (size_t)n + 1);
            if (as_read)
                *as_read = strtod(t, NULL);
            return 0;
        }
    }
    return -1;
}

void edf_format_records(int64_t n, char field[8])
{
    char t[32];
    snprintf(t, sizeof t, "%-8lld", (long long)n);
    memcpy(field, t, 8);
}

/* Write `text` left-aligned into a field of `width`, padded with spaces. */
static int put_text(uint8_t *buf, size_t at, unsigned width, const char *text, const char *name,
                    char *err, size_t size)
{
    size_t n = strlen(text);
    if (n > width)
        return fail(err, size, "%s '%s' is longer than its %u-character field", name, text,
                    width);
    for (size_t k = 0; k < n; k++)
        if ((unsigned char)text[k] < 32 || (unsigned char)text[k] > 126)
            return fail(err, size, "%s '%s' holds a character that is not printable ASCII",
                        name, text);
    memset(buf + at, ' ', width);
    memcpy(buf + at, text, n);
    return 0;
}

static int put_number(uint8_t *buf, size_t at, double v, const char *name, char *err,
                      size_t size)
{
    char text[9];
    if (edf_format_number(v, text, NULL))
        return fail(err, size, "%s %g does not fit an 8-character field", name, v);
    return put_text(buf, at, 8, text, name, err, size);
}

static int put_integer(uint8_t *buf, size_t at, unsigned width, long long v, const char *name,
                       char *err, size_t size)
{
    char text[32];
    snprintf(text, sizeof text, "%lld", v);
    return put_text(buf, at, width, text, name, err, size);
}

static int format_signal(const edf_header *h, uint8_t *buf, uint32_t i, char *err, size_t size)
{
    const edf_signal *s = &h->signals[i];
    uint32_t ns = h->n_signals;
    if (put_text(buf, signal_field_at(ns, F_LABEL, i), 16, s->label, "label", err, size) ||
        put_text(buf, signal_field_at(ns, F_TRANSDUCER, i), 80, s->transducer, "transducer",
                 err, size) ||
        put_text(buf, signal_field_at(ns, F_UNIT, i), 8, s->unit, "physical dimension", err,
                 size) ||
        put_number(buf, signal_field_at(ns, F_PMIN, i), s->phys_min, "physical minimum", err,
                   size) ||
        put_number(buf, signal_field_at(ns, F_PMAX, i), s->phys_max, "physical maximum", err,
                   size) ||
        put_integer(buf, signal_field_at(ns, F_DMIN, i), 8, s->dig_min, "digital minimum", err,
                    size) ||
        put_integer(buf, signal_field_at(ns, F_DMAX, i), 8, s->dig_max, "digital maximum", err,
                    size) ||
        put_text(buf, signal_field_at(ns, F_PREFILTER, i), 80, s->prefilter, "prefiltering",
                 err, size) ||
        put_integer(buf, signal_field_at(ns, F_SPR, i), 8, s->samples_per_record,
                    "samples per data record", err, size) ||
        put_text(buf, signal_field_at(ns, F_RESERVED, i), 32, "", "reserved", err, size))
        return -1;
    return 0;
}

int edf_header_format(const edf_header *h, uint8_t *buf, size_t len, char *err,
                      size_t err_size)
{
    size_t need = (size_t)EDF_SIGNAL_BYTES * (h->n_signals + 1);
    if (h->n_signals == 0 || h->n_signals > EDF_MAX_SIGNALS || len < need)
        return fail(err, err_size, "a header of %u signals does not fit %zu bytes",
                    h->n_signals, len);
    memset(buf, ' ', need);
    if (h->bdf) {
        memcpy(buf, EDF_BDF_VERSION, sizeof EDF_BDF_VERSION);
    } else {
        buf[0] = '0';
    }
    const char *reserved = h->plus ? (h->bdf ? (h->discontinuous ? "BDF+D" : "BDF+C")
                                             : (h->discontinuous ? "EDF+D" : "EDF+C"))
                                   : (h->bdf ? "24BIT" : "");
    char records[9] = { 0 };
    edf_format_records(h->n_records, records);
    if (put_text(buf, EDF_AT_PATIENT, 80, h->patient, "patient identification", err,
                 err_size) ||
        put_text(buf, EDF_AT_RECORDING, 80, h->recording, "recording identification", err,
                 err_size) ||
        put_text(buf, EDF_AT_START_DATE, 8, h->start_date, "start date", err, err_size) ||
        put_text(buf, EDF_AT_START_TIME, 8, h->start_time, "start time", err, err_size) ||
        put_integer(buf, EDF_AT_HEADER_BYTES, 8, (long long)need, "header bytes", err,
                    err_size) ||
        put_text(buf, EDF_AT_RESERVED, 44, reserved, "reserved", err, err_size) ||
        put_text(buf, EDF_AT_N_RECORDS, 8, records, "number of data records", err,
                 err_size) ||
        put_number(buf, EDF_AT_RECORD_SECONDS, h->record_seconds, "record duration", err,
                   err_size) ||
        put_integer(buf, EDF_AT_N_SIGNALS, 4, h->n_signals, "number of signals", err,
                    err_size))
        return -1;
    for (uint32_t i = 0; i < h->n_signals; i++)
        if (format_signal(h, buf, i, err, err_size))
            return -1;
    return 0;
}
