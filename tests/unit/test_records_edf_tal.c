/* EDF+ annotations (TALs). The vectors marked "spec" are the examples of Kemp and Olivan 2003,
 * "European data format 'plus' (EDF+)", Clin Neurophysiol 114:1755-1761, section 2.2.2-2.2.4,
 * written from memory of the spec text (not checked against it here): 0x14 ends onset,
 * duration and each annotation, 0x15 separates onset and duration, 0x00 ends a TAL. */
#include <criterion/criterion.h>
#include <math.h>
#include <string.h>

#include "edf_tal.h"

typedef struct seen {
    double onset[8], duration[8];
    char text[8][64];
    int n;
} seen;

static int collect(void *ctx, const edf_annotation *a)
{
    seen *s = ctx;
    cr_assert_lt(s->n, 8);
    s->onset[s->n] = a->onset;
    s->duration[s->n] = a->duration;
    memcpy(s->text[s->n], a->text, a->text_len);
    s->text[s->n][a->text_len] = 0;
    s->n++;
    return 0;
}

static int parse(const char *bytes, size_t len, double *start, seen *s, char *err,
                 size_t *bad_at)
{
    memset(s, 0, sizeof *s);
    return edf_tal_parse((const uint8_t *)bytes, len, start, collect, s, bad_at, err, 256);
}

Test(records_edf_tal, spec_two_annotations_share_one_onset)
{
    static const char tal[] = "+180\x14Lights off\x14" "Close door\x14\0";
    double start;
    seen s;
    char err[256];
    size_t at;
    cr_assert_eq(parse(tal, sizeof tal, &start, &s, err, &at), 0, "%s", err);
    cr_expect_eq(s.n, 2);
    cr_expect_float_eq(s.onset[0], 180, 0);
    cr_expect_str_eq(s.text[0], "Lights off");
    cr_expect_str_eq(s.text[1], "Close door");
    cr_expect_float_eq(s.onset[1], 180, 0);
    cr_expect(isnan(start)); /* its first annotation is not empty: no time-keeping TAL */
}

Test(records_edf_tal, spec_onset_with_duration)
{
    static const char tal[] = "+1800.2\x15" "25.5\x14" "Apnea\x14\0";
    double start;
    seen s;
    char err[256];
    size_t at;
    cr_assert_eq(parse(tal, sizeof tal, &start, &s, err, &at), 0, "%s", err);
    cr_expect_eq(s.n, 1);
    cr_expect_float_eq(s.onset[0], 1800.2, 1e-9);
    cr_expect_float_eq(s.duration[0], 25.5, 1e-9);
    cr_expect_str_eq(s.text[0], "Apnea");
}

Test(records_edf_tal, spec_time_keeping_tal_gives_the_record_start)
{
    /* "+567\x14\x14\0": the data record starts 567 s after the file's start (spec 2.2.4),
     * followed here by an ordinary TAL and the zero padding of the signal. */
    static const char rec[] = "+567\x14\x14\0+567.25\x14grip\x14\0\0\0\0\0";
    double start;
    seen s;
    char err[256];
    size_t at;
    cr_assert_eq(parse(rec, sizeof rec, &start, &s, err, &at), 0, "%s", err);
    cr_expect_float_eq(start, 567, 0);
    cr_expect_eq(s.n, 1);
    cr_expect_float_eq(s.onset[0], 567.25, 1e-12);
    cr_expect_str_eq(s.text[0], "grip");
}

Test(records_edf_tal, spec_negative_onset_and_annotation_after_time_keeping)
{
    /* Onsets may be negative (an event before the file's start); the time-keeping TAL may
     * carry further annotations after its empty first one. */
    static const char rec[] = "-0.065\x14\x14Recording starts\x14\0";
    double start;
    seen s;
    char err[256];
    size_t at;
    cr_assert_eq(parse(rec, sizeof rec, &start, &s, err, &at), 0, "%s", err);
    cr_expect_float_eq(start, -0.065, 1e-12);
    cr_expect_eq(s.n, 1);
    cr_expect_str_eq(s.text[0], "Recording starts");
}

Test(records_edf_tal, malformed_tals_name_their_offset)
{
    double start;
    seen s;
    char err[256];
    size_t at = 99;
    static const char no_sign[] = "12\x14x\x14\0";
    cr_expect_eq(parse(no_sign, sizeof no_sign, &start, &s, err, &at), -1);
    cr_expect(strstr(err, "must start with '+' or '-'"), "%s", err);
    cr_expect_eq(at, 0);
    static const char comma[] = "+0,5\x14x\x14\0";
    cr_expect_eq(parse(comma, sizeof comma, &start, &s, err, &at), -1);
    cr_expect(strstr(err, "not a decimal number"), "%s", err);
    cr_expect_eq(at, 2);
    static const char unterminated[] = "+1\x14open";
    cr_expect_eq(parse(unterminated, sizeof unterminated - 1, &start, &s, err, &at), -1);
    cr_expect(strstr(err, "not ended by 0x14"), "%s", err);
    cr_expect_eq(at, 3);
    static const char cut[] = "+1.5";
    cr_expect_eq(parse(cut, 4, &start, &s, err, &at), -1);
    cr_expect(strstr(err, "runs past the end"), "%s", err);
}

Test(records_edf_tal, formatted_tals_parse_back)
{
    uint8_t buf[128];
    size_t n = edf_tal_format(buf, sizeof buf, 12.004, 0, "");
    n += edf_tal_format(buf + n, sizeof buf - n, 12.5, 4, "grip");
    n += edf_tal_format(buf + n, sizeof buf - n, 13, 0, "bad\x14name");
    cr_assert_gt(n, 0);
    cr_expect_eq(memcmp(buf, "+12.004\x14\x14\0+12.5\x15" "4\x14grip\x14\0", 22), 0);
    double start;
    seen s;
    char err[256];
    size_t at;
    memset(&s, 0, sizeof s);
    cr_assert_eq(edf_tal_parse(buf, n, &start, collect, &s, &at, err, sizeof err), 0, "%s",
                 err);
    cr_expect_float_eq(start, 12.004, 1e-12);
    cr_expect_eq(s.n, 2);
    cr_expect_float_eq(s.duration[0], 4, 0);
    cr_expect_str_eq(s.text[1], "bad name");
    cr_expect_eq(edf_tal_format(buf, 8, 1234.5, 0, "too long for eight"), 0);
}
