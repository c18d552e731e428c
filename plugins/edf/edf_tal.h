/* edf_tal: EDF+ time-stamped annotation lists (TALs), the text that an "EDF Annotations"
 * signal holds in each data record (Kemp and Olivan 2003, section 2.2):
 *     TAL = '+'|'-' onset [0x15 duration] 0x14 { annotation 0x14 } 0x00
 * The first TAL of a record keeps time: its first annotation is empty and its onset is the
 * record's start ("+567\x14\x14\0"). Unused bytes after the last TAL are 0x00. */
#ifndef WEFT_EDF_TAL_H
#define WEFT_EDF_TAL_H

#include <stddef.h>
#include <stdint.h>

#define EDF_TAL_ONSET 0x14          /* ends the onset, the duration and every annotation */
#define EDF_TAL_DURATION 0x15       /* between onset and duration */

typedef struct edf_annotation {
    double onset;                   /* seconds after the file's start date and time */
    double duration;                /* seconds; 0 when not given */
    int has_duration;
    const char *text;               /* UTF-8, text_len bytes, not NUL-terminated */
    size_t text_len;
} edf_annotation;

/* Called for every non-empty annotation; return non-zero to stop parsing (it is returned). */
typedef int (*edf_annotation_fn)(void *ctx, const edf_annotation *a);

/* Parse the annotation bytes of one data record. *record_start gets the onset of the
 * time-keeping TAL, or NAN if the record has none. Returns 0; a callback's non-zero value; or
 * -1 with the problem in err and its offset (into buf) in *bad_at. */
int edf_tal_parse(const uint8_t *buf, size_t len, double *record_start, edf_annotation_fn fn,
                  void *ctx, size_t *bad_at, char *err, size_t err_size);

/* Append one TAL to out[0 .. cap): onset, a duration if > 0, and one annotation (text may be
 * "" for the time-keeping TAL). Bytes 0x00, 0x14 and 0x15 in text, which would end the
 * annotation early, are written as spaces. Returns the bytes written, or 0 if it does not
 * fit. */
size_t edf_tal_format(uint8_t *out, size_t cap, double onset, double duration,
                      const char *text);

/* Seconds as a TAL writes them: sign, then the shortest decimal of at most 9 decimals
 * ("+12.004", "-0.5", "+3"). Returns the length. */
int edf_tal_format_seconds(double t, int with_sign, char *out, size_t cap);

#endif
