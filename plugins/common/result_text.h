/* result_text: formatting readout results as text lines without allocating. */
#ifndef WEFT_RESULT_TEXT_H
#define WEFT_RESULT_TEXT_H

#include <stddef.h>
#include <weft/stage.h>

/* A growing line in a fixed buffer; `overflow` is set if it did not fit. */
typedef struct text_line {
    char *buf;
    size_t size, len;
    int overflow;
} text_line;

void text_put(text_line *t, const char *s);
void text_printf(text_line *t, const char *fmt, ...);
/* s as a JSON string, with quotes and escapes (RFC 8259, section 7). */
void text_json_string(text_line *t, const char *s);
/* s as a CSV field, quoted if it holds a comma, quote or newline (RFC 4180). */
void text_csv_field(text_line *t, const char *s);
/* Seconds to the microsecond, without trailing zeros ("1.2", not "1.2000000000000002"):
 * query times are k * every, whose binary rounding is noise, not information. */
void text_seconds(text_line *t, double seconds);
/* A double in the shortest form that reads back the same (up to 17 digits). */
void text_double(text_line *t, double v);

#endif
