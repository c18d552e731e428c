/* EDF/BDF header parsing and writing. The layout (field order, widths, offsets) is the one of
 * the EDF specification, Kemp et al. 1992, "A simple format for exchange of digitized
 * polygraphic recordings", Electroencephalogr Clin Neurophysiol 82:391-393, table 1, and of
 * EDF+ (Kemp and Olivan 2003, Clin Neurophysiol 114:1755-1761, section 2.1), as remembered:
 * the offsets below are written out by hand from that table, not taken from our own code. */
#include <criterion/criterion.h>
#include <stdio.h>
#include <string.h>

#include "edf_header.h"

/* One EDF+ header with two signals, typed field by field as the spec lays it out. */
static size_t spec_header(uint8_t *buf, const char *ns_text, const char *bytes_text)
{
    memset(buf, ' ', 768);
    const struct { size_t at; const char *text; } fields[] = {
        { 0, "0" },                                   /* version, 8 */
        { 8, "P-0001 F 01-JAN-1970 Demo_Subject" },     /* patient, 80: code sex birthdate name */
        { 88, "Startdate 02-MAR-2002 X X X" },         /* recording, 80 */
        { 168, "02.03.02" },                          /* start date */
        { 176, "11.43.07" },                          /* start time */
        { 184, bytes_text },                          /* header bytes */
        { 192, "EDF+C" },                             /* reserved, 44 */
        { 236, "10" },                                /* data records */
        { 244, "0.5" },                               /* record duration */
        { 252, ns_text },                             /* signals, 4 */
        /* signal headers: 2 x label(16), transducer(80), dimension(8), pmin, pmax, dmin, dmax
         * (8 each), prefiltering(80), samples per record(8), reserved(32) */
        { 256, "EEG Fpz-Cz" }, { 272, "EDF Annotations" },
        { 288, "AgAgCl electrode" }, { 368, "" },
        { 448, "uV" }, { 456, "" },
        { 464, "-440" }, { 472, "-1" },
        { 480, "510" }, { 488, "1" },
        { 496, "-2048" }, { 504, "-32768" },
        { 512, "2047" }, { 520, "32767" },
        { 528, "HP:0.1Hz LP:75Hz" }, { 608, "" },
        { 688, "50" }, { 696, "30" },
    };
    for (size_t i = 0; i < sizeof fields / sizeof fields[0]; i++)
        memcpy(buf + fields[i].at, fields[i].text, strlen(fields[i].text));
    return 768;
}

Test(records_edf_header, spec_layout_is_read_field_by_field)
{
    uint8_t buf[768];
    edf_header h;
    char err[EDF_ERROR_MAX] = "";
    size_t n = spec_header(buf, "2", "768");
    cr_assert_eq(edf_header_parse(buf, n, &h, err, sizeof err), 0, "%s", err);
    cr_expect_eq(h.plus, 1);
    cr_expect_eq(h.bdf, 0);
    cr_expect_eq(h.n_records, 10);
    cr_expect_float_eq(h.record_seconds, 0.5, 1e-12);
    cr_expect_str_eq(h.start_time, "11.43.07");
    cr_expect_str_eq(h.signals[0].label, "EEG Fpz-Cz");
    cr_expect_str_eq(h.signals[0].unit, "uV");
    cr_expect_str_eq(h.signals[0].prefilter, "HP:0.1Hz LP:75Hz");
    cr_expect_eq(h.signals[0].samples_per_record, 50);
    cr_expect(h.signals[1].annotations);
    cr_expect_eq(h.record_bytes, 50 * 2 + 30 * 2);
    cr_expect_eq(h.signals[1].record_offset, 100);
    /* physical = (digital - dmin) * (pmax - pmin) / (dmax - dmin) + pmin (Kemp et al. 1992) */
    double d = 1000, expect = (d + 2048) * (510 + 440) / 4095.0 - 440;
    cr_expect_float_eq(h.signals[0].gain * d + h.signals[0].offset, expect, 1e-9);
    cr_expect_float_eq(edf_signal_rate(&h, 0), 100.0, 1e-12);
    edf_header_free(&h);
}

static void expect_error(uint8_t *buf, size_t n, const char *fragment)
{
    edf_header h;
    char err[EDF_ERROR_MAX] = "";
    cr_expect_eq(edf_header_parse(buf, n, &h, err, sizeof err), -1, "accepted; wanted '%s'",
                 fragment);
    cr_expect(strstr(err, fragment) != NULL, "error '%s' lacks '%s'", err, fragment);
    edf_header_free(&h);
}

Test(records_edf_header, truncated_header_names_the_offset)
{
    uint8_t buf[768];
    spec_header(buf, "2", "768");
    expect_error(buf, 100, "header byte 100: the file ends inside the 256-byte fixed header");
    expect_error(buf, 600, "header byte 600: the file ends inside the header");
}

Test(records_edf_header, wrong_header_length_names_field_and_offset)
{
    uint8_t buf[768];
    spec_header(buf, "2", "512");
    expect_error(buf, 768, "header byte 184 (number of header bytes): '512' does not match 2 "
                           "signals");
}

Test(records_edf_header, impossible_counts_are_refused)
{
    uint8_t buf[768];
    spec_header(buf, "0", "256");
    expect_error(buf, 768, "header byte 252 (number of signals): '0' is outside 1 to 9999");
    spec_header(buf, "2", "768");
    memcpy(buf + 236, "1x      ", 8);
    expect_error(buf, 768, "header byte 236 (number of data records): '1x' is not a whole");
    spec_header(buf, "2", "768");
    memcpy(buf + 236, "-7      ", 8);
    expect_error(buf, 768, "header byte 236 (number of data records): '-7' is outside -1");
    spec_header(buf, "2", "768");
    memcpy(buf + 688, "0       ", 8);
    expect_error(buf, 768, "header byte 688 (signal 1 'EEG Fpz-Cz' samples per data record)");
    spec_header(buf, "2", "768");
    memcpy(buf + 512, "-4000   ", 8);
    expect_error(buf, 768, "header byte 512 (signal 1 'EEG Fpz-Cz' digital maximum): '-4000' "
                           "must be above the digital minimum");
    spec_header(buf, "2", "768");
    memcpy(buf + 496, "-99999  ", 8);
    expect_error(buf, 768, "header byte 496 (signal 1 'EEG Fpz-Cz' digital minimum): '-99999' "
                           "is outside -32768 to 32767");
    spec_header(buf, "2", "768");
    memcpy(buf + 464, "nan     ", 8);
    expect_error(buf, 768, "header byte 464 (signal 1 'EEG Fpz-Cz' physical minimum): 'nan' "
                           "is not a number");
}

Test(records_edf_header, non_ascii_is_refused_where_ascii_is_required)
{
    uint8_t buf[768];
    spec_header(buf, "2", "768");
    buf[20] = 0xE9; /* Latin-1 e-acute in the patient field */
    expect_error(buf, 768, "header byte 20 (patient identification): byte 0xe9 is not "
                           "printable ASCII");
    spec_header(buf, "2", "768");
    buf[300] = 0x07;
    expect_error(buf, 768, "header byte 300 (signal 1 transducer type): byte 0x07");
    spec_header(buf, "2", "768");
    buf[0] = 'X';
    expect_error(buf, 768, "header byte 0 (version)");
}

Test(records_edf_header, zero_record_duration_only_for_annotations)
{
    uint8_t buf[768];
    spec_header(buf, "2", "768");
    memcpy(buf + 244, "0       ", 8);
    expect_error(buf, 768, "only allowed in files holding annotations alone");
}

Test(records_edf_header, formatted_header_reads_back)
{
    edf_signal sig[2] = { { .label = "eeg.C3", .unit = "uV", .phys_min = -262144,
                            .phys_max = 262144, .dig_min = -8388608, .dig_max = 8388607,
                            .samples_per_record = 250 },
                          { .label = "BDF Annotations", .phys_min = -1, .phys_max = 1,
                            .dig_min = -8388608, .dig_max = 8388607,
                            .samples_per_record = 40 } };
    edf_header h = { .bdf = 1, .plus = 1, .patient = "X X X X", .recording = "Startdate X",
                     .start_date = "01.02.24", .start_time = "10.11.12", .n_records = 3,
                     .record_seconds = 1, .n_signals = 2, .signals = sig };
    uint8_t buf[768];
    char err[EDF_ERROR_MAX] = "";
    cr_assert_eq(edf_header_format(&h, buf, sizeof buf, err, sizeof err), 0, "%s", err);
    cr_expect_eq(buf[0], 0xFF);
    cr_expect_eq(memcmp(buf, EDF_BDF_VERSION, 8), 0);
    cr_expect_eq(memcmp(buf + 192, "BDF+C", 5), 0);
    cr_expect_eq(memcmp(buf + 184, "768     ", 8), 0);
    edf_header back;
    cr_assert_eq(edf_header_parse(buf, sizeof buf, &back, err, sizeof err), 0, "%s", err);
    cr_expect(back.bdf && back.plus && !back.discontinuous);
    cr_expect_eq(back.sample_bytes, 3);
    cr_expect_str_eq(back.signals[0].label, "eeg.C3");
    cr_expect_float_eq(back.signals[0].phys_max, 262144, 0);
    cr_expect(back.signals[1].annotations);
    cr_expect_eq(back.record_bytes, (250 + 40) * 3);
    edf_header_free(&back);
}

Test(records_edf_header, numbers_use_the_most_digits_that_fit_eight_characters)
{
    char text[9];
    double v;
    cr_assert_eq(edf_format_number(-3276.8, text, &v), 0);
    cr_expect_str_eq(text, "-3276.8");
    cr_expect_eq(edf_format_number(1.0 / 3.0, text, &v), 0);
    cr_expect_str_eq(text, "0.333333");
    cr_expect_float_eq(v, 0.333333, 1e-12);
    cr_expect_eq(edf_format_number(-262144, text, &v), 0);
    cr_expect_str_eq(text, "-262144");
    cr_expect_eq(edf_format_number(123456789.0, text, &v), -1);
    char field[8];
    edf_format_records(42, field);
    cr_expect_eq(memcmp(field, "42      ", 8), 0);
}
