/* The recorder sink and the edf reader source together: what is recorded comes back within
 * half a quantization step, markers at their sample index, and bad or cut-short files are
 * reported, not crashed on. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "edf_header.h"
#include "edf_tal.h"
#include "stage_driver.h"

#define RECORDER WEFT_PLUGIN_DIR "/recorder.so"
#define READER WEFT_PLUGIN_DIR "/edf.so"

static const char *const eeg_labels[] = { "C3", "C4", "Cz" };
static const char *const emg_labels[] = { "flexor", "extensor" };

static float eeg_value(uint64_t n, uint32_t c)
{
    return (float)(100.0 * sin(2 * WEFT_PI * 10.0 * (double)n / 250.0 + c) + 50.0 * c);
}

static float emg_value(uint64_t n, uint32_t c)
{
    return (float)(300.0 * sin(2 * WEFT_PI * 37.0 * (double)n / 1000.0) * (c ? -0.5 : 1.0));
}

static char *temp_path(const char *suffix)
{
    static char path[256];
    snprintf(path, sizeof path, "/tmp/weft-records-%d-%s", (int)getpid(), suffix);
    unlink(path);
    return path;
}

/* Record `seconds` of a 3-channel 250 Hz "eeg" and a 2-channel 1000 Hz "emg" in uneven blocks,
 * with a "grip" marker on eeg at sample 300 and a "rest" marker at 610. */
static void record(const char *path, const char *extra, double seconds)
{
    weft_layout in[2] = {
        { .name = "eeg", .kind = WEFT_STREAM_SAMPLES, .channels = 3, .rate = 250,
          .labels = eeg_labels, .max_frames = 64 },
        { .name = "emg", .kind = WEFT_STREAM_SAMPLES, .channels = 2, .rate = 1000,
          .labels = emg_labels, .max_frames = 256 },
    };
    char params[512];
    snprintf(params, sizeof params, "{ path: '%s', record: 0.5%s }", path, extra ? extra : "");
    stage_driver sd;
    diag d = { 0 };
    cr_assert_eq(stage_driver_open(&sd, RECORDER, params, in, 2, &d), 0, "%s", d.msg);
    uint64_t eeg_total = (uint64_t)(seconds * 250), emg_total = (uint64_t)(seconds * 1000);
    uint64_t ne = 0, nm = 0;
    static float eeg[64 * 3], emg[256 * 2];
    for (unsigned round = 0; ne < eeg_total || nm < emg_total; round++) {
        uint32_t fe = 1 + round % 37, fm = 4 * fe + round % 3;
        if (fe > eeg_total - ne)
            fe = (uint32_t)(eeg_total - ne);
        if (fm > emg_total - nm)
            fm = (uint32_t)(emg_total - nm);
        for (uint32_t k = 0; k < fe; k++)
            for (uint32_t c = 0; c < 3; c++)
                eeg[k * 3 + c] = eeg_value(ne + k, c);
        for (uint32_t k = 0; k < fm; k++)
            for (uint32_t c = 0; c < 2; c++)
                emg[k * 2 + c] = emg_value(nm + k, c);
        weft_marker marks[2];
        uint32_t n_marks = 0;
        if (ne <= 300 && 300 < ne + fe)
            marks[n_marks++] = (weft_marker){ "grip", 300, 4.0 };
        if (ne <= 610 && 610 < ne + fe)
            marks[n_marks++] = (weft_marker){ "rest", 610, 0 };
        weft_block b[2] = {
            { .data = eeg, .frames = fe, .channels = 3, .first_index = ne,
              .markers = marks, .n_markers = n_marks },
            { .data = emg, .frames = fm, .channels = 2, .first_index = nm },
        };
        cr_assert_eq(sd.n->api->process(sd.n->self, b, 2, NULL), 0);
        ne += fe;
        nm += fm;
    }
    stage_driver_close(&sd);
}

typedef struct played {
    float *data;
    uint64_t frames;
    uint32_t channels;
    double rate;
    char labels[8][32];
    weft_marker markers[16];
    char marker_text[16][64];
    uint32_t n_markers;
} played;

static int play(const char *params, played *p, diag *d)
{
    stage_driver sd;
    memset(p, 0, sizeof *p);
    if (stage_driver_open(&sd, READER, params, NULL, 0, d)) {
        stage_driver_close(&sd);
        return -1;
    }
    const weft_layout *out = stage_driver_out(&sd);
    p->channels = out->channels;
    p->rate = out->rate;
    for (uint32_t c = 0; c < out->channels && c < 8; c++)
        snprintf(p->labels[c], sizeof p->labels[c], "%s", out->labels[c]);
    size_t cap = 1 << 16;
    p->data = calloc(cap * p->channels, sizeof *p->data);
    weft_marker marks[256];
    for (uint32_t request = 7;; request = request * 3 % 101 + 1) {
        if (p->frames + request > cap)
            request = (uint32_t)(cap - p->frames);
        weft_block b = { .data = p->data + p->frames * p->channels, .capacity = request,
                         .channels = p->channels, .first_index = p->frames, .markers = marks,
                         .marker_capacity = 256 };
        int rc = sd.n->api->process(sd.n->self, NULL, 0, &b);
        cr_assert_geq(rc, 0, "reader failed: %s", sd.n->error);
        for (uint32_t m = 0; m < b.n_markers && p->n_markers < 16; m++) {
            snprintf(p->marker_text[p->n_markers], 64, "%s", marks[m].label);
            p->markers[p->n_markers] = marks[m];
            p->markers[p->n_markers].label = p->marker_text[p->n_markers];
            p->n_markers++;
        }
        p->frames += b.frames;
        if (rc == WEFT_END || request == 0)
            break;
    }
    stage_driver_close(&sd);
    return 0;
}

static void expect_eeg(const played *p, double step)
{
    cr_assert_eq(p->channels, 3);
    cr_expect_str_eq(p->labels[0], "C3");
    cr_expect_str_eq(p->labels[2], "Cz");
    double worst = 0;
    for (uint64_t n = 0; n < p->frames; n++)
        for (uint32_t c = 0; c < 3; c++) {
            double e = fabs(p->data[n * 3 + c] - eeg_value(n, c));
            if (e > worst)
                worst = e;
        }
    /* Half a step of rounding, plus float32's rounding of values up to ~200 uV. */
    cr_expect_leq(worst, step / 2 + 3e-5, "worst error %g, step %g", worst, step);
}

Test(records_roundtrip, bdf_samples_come_back_within_half_a_step)
{
    char *path = temp_path("a.bdf");
    record(path, NULL, 3.0);
    played p;
    diag d = { 0 };
    cr_assert_eq(play("{ path: /tmp/x }", &p, &d), -1); /* (a missing file, for contrast) */
    char params[300];
    snprintf(params, sizeof params, "{ path: '%s', stream: eeg }", path);
    cr_assert_eq(play(params, &p, &d), 0, "%s", d.msg);
    cr_expect_eq(p.frames, 750);
    cr_expect_float_eq(p.rate, 250, 0);
    expect_eeg(&p, 2 * 262144.0 / 16777215.0);
    free(p.data);
    unlink(path);
}

Test(records_roundtrip, edf_samples_come_back_within_half_a_step)
{
    char *path = temp_path("a.edf");
    record(path, ", range_uv: [400, 500]", 2.0);
    played p;
    diag d = { 0 };
    char params[300];
    snprintf(params, sizeof params, "{ path: '%s', stream: eeg }", path);
    cr_assert_eq(play(params, &p, &d), 0, "%s", d.msg);
    cr_expect_eq(p.frames, 500);
    expect_eeg(&p, 2 * 400.0 / 65535.0);
    free(p.data);
    snprintf(params, sizeof params, "{ path: '%s', signals: [emg.flexor] }", path);
    cr_assert_eq(play(params, &p, &d), 0, "%s", d.msg);
    cr_expect_str_eq(p.labels[0], "emg.flexor");
    cr_expect_eq(p.frames, 2000);
    for (uint64_t n = 0; n < p.frames; n++)
        cr_assert_leq(fabs(p.data[n] - emg_value(n, 0)), 500.0 / 65535.0 + 1e-4, "sample %llu",
                      (unsigned long long)n);
    free(p.data);
    unlink(path);
}

Test(records_roundtrip, markers_come_back_at_their_sample_index)
{
    char *path = temp_path("m.bdf");
    record(path, NULL, 3.0);
    played p;
    diag d = { 0 };
    char params[300];
    snprintf(params, sizeof params, "{ path: '%s', stream: eeg }", path);
    cr_assert_eq(play(params, &p, &d), 0, "%s", d.msg);
    cr_assert_eq(p.n_markers, 2);
    cr_expect_str_eq(p.markers[0].label, "grip");
    cr_expect_eq(p.markers[0].index, 300);
    cr_expect_float_eq(p.markers[0].duration, 4.0, 1e-9);
    cr_expect_str_eq(p.markers[1].label, "rest");
    cr_expect_eq(p.markers[1].index, 610);
    free(p.data);
    /* The same markers on the 1000 Hz stream fall on the sample of the same instant. */
    snprintf(params, sizeof params, "{ path: '%s', stream: emg }", path);
    cr_assert_eq(play(params, &p, &d), 0, "%s", d.msg);
    cr_assert_eq(p.n_markers, 2);
    cr_expect_eq(p.markers[0].index, 1200);
    cr_expect_eq(p.markers[1].index, 2440);
    free(p.data);
    snprintf(params, sizeof params, "{ path: '%s', stream: emg, markers: false }", path);
    cr_assert_eq(play(params, &p, &d), 0, "%s", d.msg);
    cr_expect_eq(p.n_markers, 0);
    free(p.data);
    unlink(path);
}

Test(records_roundtrip, signals_of_two_rates_in_one_stage_are_refused_by_name)
{
    char *path = temp_path("r.bdf");
    record(path, NULL, 1.0);
    played p;
    diag d = { 0 };
    char params[300];
    snprintf(params, sizeof params, "{ path: '%s' }", path);
    cr_assert_eq(play(params, &p, &d), -1);
    cr_expect(strstr(d.msg, "'eeg.C3' 250 Hz, 'emg.flexor' 1000 Hz"), "%s", d.msg);
    cr_expect(strstr(d.msg, "streams: eeg 250 Hz, emg 1000 Hz"), "%s", d.msg);
    diag_clear(&d);
    snprintf(params, sizeof params, "{ path: '%s', stream: eye }", path);
    cr_assert_eq(play(params, &p, &d), -1);
    cr_expect(strstr(d.msg, "no signals labelled 'eye.*'; its streams are: eeg 250 Hz, emg "
                            "1000 Hz"), "%s", d.msg);
    unlink(path);
}

Test(records_roundtrip, truncated_last_record_delivers_the_complete_ones)
{
    char *path = temp_path("t.bdf");
    record(path, NULL, 2.0);
    FILE *f = fopen(path, "rb");
    uint8_t head[1792];
    cr_assert_eq(fread(head, 1, sizeof head, f), sizeof head);
    fclose(f);
    edf_header h;
    char err[EDF_ERROR_MAX];
    cr_assert_eq(edf_header_parse(head, sizeof head, &h, err, sizeof err), 0, "%s", err);
    cr_expect_eq(h.n_records, 4);
    /* Cut the file in the middle of its last (fourth) record. */
    cr_assert_eq(truncate(path, (off_t)(h.header_bytes + 3 * h.record_bytes + 100)), 0);
    played p;
    diag d = { 0 };
    char params[300];
    snprintf(params, sizeof params, "{ path: '%s', stream: eeg }", path);
    cr_assert_eq(play(params, &p, &d), 0, "%s", d.msg);
    cr_expect_eq(p.frames, 3 * 125);
    expect_eeg(&p, 2 * 262144.0 / 16777215.0);
    free(p.data);
    /* Cut inside the header: an error naming the offset, no crash. */
    cr_assert_eq(truncate(path, 700), 0);
    cr_assert_eq(play(params, &p, &d), -1);
    cr_expect(strstr(d.msg, "header byte 700: the file ends inside the header"), "%s", d.msg);
    edf_header_free(&h);
    unlink(path);
}

Test(records_roundtrip, corrupt_annotation_names_record_and_byte)
{
    char *path = temp_path("c.bdf");
    record(path, NULL, 1.0);
    FILE *f = fopen(path, "r+b");
    uint8_t head[1792];
    cr_assert_eq(fread(head, 1, sizeof head, f), sizeof head);
    edf_header h;
    char err[EDF_ERROR_MAX];
    cr_assert_eq(edf_header_parse(head, sizeof head, &h, err, sizeof err), 0, "%s", err);
    long at = (long)(h.header_bytes + h.record_bytes + h.signals[h.n_signals - 1].record_offset);
    fseek(f, at, SEEK_SET);
    fputc('x', f); /* record 1's time-keeping TAL loses its sign */
    fclose(f);
    played p;
    diag d = { 0 };
    char params[300];
    snprintf(params, sizeof params, "{ path: '%s', stream: eeg }", path);
    cr_assert_eq(play(params, &p, &d), -1);
    char expect[128];
    snprintf(expect, sizeof expect, "byte %ld (data record 1, signal 6 'BDF Annotations'): a "
             "TAL onset must start with '+' or '-'", at);
    cr_expect(strstr(d.msg, expect), "%s", d.msg);
    edf_header_free(&h);
    unlink(path);
}

/* An EDF+D file written by hand: three 1-second records starting at 0, 1 and 5 s. */
static void write_discontinuous(const char *path)
{
    edf_signal sig[2] = {
        { .label = "eeg.Cz", .unit = "uV", .phys_min = -100, .phys_max = 100,
          .dig_min = -32768, .dig_max = 32767, .samples_per_record = 10 },
        { .label = "EDF Annotations", .phys_min = -1, .phys_max = 1, .dig_min = -32768,
          .dig_max = 32767, .samples_per_record = 30 },
    };
    edf_header h = { .plus = 1, .discontinuous = 1, .patient = "X X X X",
                     .recording = "Startdate X X X X", .start_date = "01.01.24",
                     .start_time = "00.00.00", .n_records = 3, .record_seconds = 1,
                     .n_signals = 2, .signals = sig };
    uint8_t head[768], rec[80];
    char err[EDF_ERROR_MAX];
    cr_assert_eq(edf_header_format(&h, head, sizeof head, err, sizeof err), 0, "%s", err);
    FILE *f = fopen(path, "wb");
    fwrite(head, 1, sizeof head, f);
    const double starts[3] = { 0, 1, 5 };
    for (int r = 0; r < 3; r++) {
        memset(rec, 0, sizeof rec);
        for (int k = 0; k < 10; k++) {
            int16_t v = (int16_t)(1000 * r + k);
            rec[2 * k] = (uint8_t)(v & 0xFF);
            rec[2 * k + 1] = (uint8_t)((uint16_t)v >> 8);
        }
        size_t n = edf_tal_format(rec + 20, 60, starts[r], 0, "");
        if (r == 2)
            edf_tal_format(rec + 20 + n, 60 - n, 5.5, 0, "cue");
        fwrite(rec, 1, sizeof rec, f);
    }
    fclose(f);
}

Test(records_roundtrip, gaps_of_discontinuous_files_become_markers)
{
    char *path = temp_path("d.edf");
    write_discontinuous(path);
    played p;
    diag d = { 0 };
    char params[300];
    snprintf(params, sizeof params, "{ path: '%s', stream: eeg }", path);
    cr_assert_eq(play(params, &p, &d), 0, "%s", d.msg);
    cr_expect_eq(p.frames, 30);
    cr_assert_eq(p.n_markers, 2);
    cr_expect_str_eq(p.markers[0].label, "gap");
    cr_expect_eq(p.markers[0].index, 20);
    cr_expect_float_eq(p.markers[0].duration, 3.0, 1e-9);
    /* 5.5 s lies half-way into the third record: its sample 5. */
    cr_expect_str_eq(p.markers[1].label, "cue");
    cr_expect_eq(p.markers[1].index, 25);
    double gain = 200.0 / 65535.0, offset = -100 - gain * -32768;
    cr_expect_float_eq(p.data[21], (float)(gain * 2001 + offset), 1e-4);
    free(p.data);
    unlink(path);
}

Test(records_roundtrip, existing_recording_is_never_overwritten_by_default)
{
    char *path = temp_path("e.bdf");
    FILE *f = fopen(path, "w");
    fputs("precious", f);
    fclose(f);
    weft_layout in = { .name = "eeg", .kind = WEFT_STREAM_SAMPLES, .channels = 3, .rate = 250,
                       .labels = eeg_labels, .max_frames = 64 };
    char params[300];
    snprintf(params, sizeof params, "{ path: '%s' }", path);
    stage_driver sd;
    diag d = { 0 };
    cr_assert_eq(stage_driver_open(&sd, RECORDER, params, &in, 1, &d), -1);
    cr_expect(strstr(d.msg, "exists already"), "%s", d.msg);
    stage_driver_close(&sd);
    f = fopen(path, "r");
    char back[16] = "";
    cr_expect(fgets(back, sizeof back, f) != NULL);
    fclose(f);
    cr_expect_str_eq(back, "precious");
    unlink(path);
}

Test(records_roundtrip, record_length_must_hold_whole_samples)
{
    weft_layout in = { .name = "eeg", .kind = WEFT_STREAM_SAMPLES, .channels = 1, .rate = 256,
                       .max_frames = 64 };
    char params[300];
    snprintf(params, sizeof params, "{ path: '%s', record: 0.1 }", temp_path("w.bdf"));
    stage_driver sd;
    diag d = { 0 };
    cr_assert_eq(stage_driver_open(&sd, RECORDER, params, &in, 1, &d), -1);
    cr_expect(strstr(d.msg, "a record of 0.1 s holds 25.6 samples of input 'eeg' (256 Hz)"),
              "%s", d.msg);
    stage_driver_close(&sd);
}

Test(records_roundtrip, long_labels_are_cut_to_sixteen_characters_and_stay_unique)
{
    static const char *const names[] = { "VeryLongChannelA", "VeryLongChannelB" };
    weft_layout in = { .name = "eeg", .kind = WEFT_STREAM_SAMPLES, .channels = 2, .rate = 100,
                       .labels = names, .max_frames = 64 };
    char *path = temp_path("l.edf");
    char params[300];
    snprintf(params, sizeof params, "{ path: '%s' }", path);
    stage_driver sd;
    diag d = { 0 };
    cr_assert_eq(stage_driver_open(&sd, RECORDER, params, &in, 1, &d), 0, "%s", d.msg);
    float data[200] = { 0 };
    weft_block b = { .data = data, .frames = 100, .channels = 2 };
    cr_assert_eq(sd.n->api->process(sd.n->self, &b, 1, NULL), 0);
    stage_driver_close(&sd);
    played p;
    snprintf(params, sizeof params, "{ path: '%s', stream: eeg }", path);
    cr_assert_eq(play(params, &p, &d), 0, "%s", d.msg);
    cr_expect_str_eq(p.labels[0], "VeryLongChan");
    cr_expect_str_eq(p.labels[1], "2");
    free(p.data);
    unlink(path);
}

Test(records_roundtrip, samples_outside_the_range_are_clipped_to_it)
{
    weft_layout in = { .name = "emg", .kind = WEFT_STREAM_SAMPLES, .channels = 1, .rate = 100,
                       .max_frames = 64 };
    char *path = temp_path("k.bdf");
    char params[300];
    snprintf(params, sizeof params, "{ path: '%s', range_uv: [10] }", path);
    stage_driver sd;
    diag d = { 0 };
    cr_assert_eq(stage_driver_open(&sd, RECORDER, params, &in, 1, &d), 0, "%s", d.msg);
    float data[100];
    for (int k = 0; k < 100; k++)
        data[k] = k < 50 ? 25.0f : -25.0f;
    weft_block b = { .data = data, .frames = 100, .channels = 1 };
    cr_assert_eq(sd.n->api->process(sd.n->self, &b, 1, NULL), 0);
    stage_driver_close(&sd);
    played p;
    snprintf(params, sizeof params, "{ path: '%s', stream: emg }", path);
    cr_assert_eq(play(params, &p, &d), 0, "%s", d.msg);
    cr_expect_float_eq(p.data[0], 10.0, 1e-5);
    cr_expect_float_eq(p.data[99], -10.0, 1e-5);
    free(p.data);
    unlink(path);
}

Test(records_roundtrip, a_run_faster_than_real_time_loses_nothing_with_a_small_buffer)
{
    /* 60 s of data arrive in milliseconds: far ahead of the clock, so the recorder waits for
     * its writer instead of dropping what does not fit its 1-second queue. */
    char *path = temp_path("f.bdf");
    record(path, ", buffer: 1", 60.0);
    played p;
    diag d = { 0 };
    char params[300];
    snprintf(params, sizeof params, "{ path: '%s', stream: eeg }", path);
    cr_assert_eq(play(params, &p, &d), 0, "%s", d.msg);
    cr_expect_eq(p.frames, 60 * 250);
    expect_eeg(&p, 2 * 262144.0 / 16777215.0);
    for (uint32_t m = 0; m < p.n_markers; m++)
        cr_expect(strncmp(p.markers[m].label, "lost", 4), "marker '%s' at %llu",
                  p.markers[m].label, (unsigned long long)p.markers[m].index);
    free(p.data);
    unlink(path);
}

Test(records_roundtrip, a_recorder_that_gets_no_samples_touches_no_file)
{
    /* `weft check` initialises every stage: it must not leave an empty recording behind, nor
     * clear an old one that the graph may overwrite once it runs. */
    weft_layout in = { .name = "eeg", .kind = WEFT_STREAM_SAMPLES, .channels = 3, .rate = 250,
                       .labels = eeg_labels, .max_frames = 64 };
    char *path = temp_path("n.bdf"), params[300];
    snprintf(params, sizeof params, "{ path: '%s' }", path);
    stage_driver sd;
    diag d = { 0 };
    cr_assert_eq(stage_driver_open(&sd, RECORDER, params, &in, 1, &d), 0, "%s", d.msg);
    stage_driver_close(&sd);
    cr_expect_neq(access(path, F_OK), 0, "an empty recording was left behind");
    FILE *f = fopen(path, "w");
    fputs("yesterday", f);
    fclose(f);
    snprintf(params, sizeof params, "{ path: '%s', overwrite: true }", path);
    cr_assert_eq(stage_driver_open(&sd, RECORDER, params, &in, 1, &d), 0, "%s", d.msg);
    stage_driver_close(&sd);
    char back[16] = "";
    f = fopen(path, "r");
    cr_expect(fgets(back, sizeof back, f) != NULL);
    fclose(f);
    cr_expect_str_eq(back, "yesterday");
    unlink(path);
}
