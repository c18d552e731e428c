/* records_edflib_check: files written by an independent EDF writer -- EDFlib, Debian's
 * libedf-dev -- are read by weft's `edf` reader with the same samples and annotations. EDFlib
 * writes an EDF+ and a BDF+ file with two signals at different rates and a few annotations;
 * EDFlib's own reader gives the reference values; weft must agree to 1e-6 of the physical
 * range, and put each annotation on the sample of its onset.
 * Run as a test (ctest: tools.records_edflib_check); prints "N passed, M failed". */
#include <edflib.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "stage_driver.h"

#define SECONDS 4
static int passed, failed;

static void check(int ok, const char *what)
{
    printf("%s: %s\n", ok ? "ok" : "FAIL", what);
    ok ? passed++ : failed++;
}

static double wave(int signal, long n, int rate)
{
    return signal == 0 ? 80.0 * sin(2 * WEFT_PI * 10.0 * n / rate) - 20.0
                       : 400.0 * sin(2 * WEFT_PI * 41.0 * n / rate);
}

static const int rates[2] = { 250, 1000 };
static const char *const labels[2] = { "eeg.Cz", "emg.flexor" };

/* Write with EDFlib: 1-second records, signals eeg.Cz (250 Hz) and emg.flexor (1000 Hz). */
static int write_file(const char *path, int bdf)
{
    int h = edfopen_file_writeonly(path, bdf ? EDFLIB_FILETYPE_BDFPLUS : EDFLIB_FILETYPE_EDFPLUS,
                                   2);
    if (h < 0)
        return -1;
    int dmax = bdf ? 8388607 : 32767;
    for (int s = 0; s < 2; s++) {
        edf_set_samplefrequency(h, s, rates[s]);
        edf_set_physical_maximum(h, s, s ? 500 : 200);
        edf_set_physical_minimum(h, s, s ? -500 : -200);
        edf_set_digital_maximum(h, s, dmax);
        edf_set_digital_minimum(h, s, -dmax - 1);
        edf_set_label(h, s, labels[s]);
        edf_set_physical_dimension(h, s, "uV");
    }
    double buf[1000];
    for (int sec = 0; sec < SECONDS; sec++)
        for (int s = 0; s < 2; s++) {
            for (int k = 0; k < rates[s]; k++)
                buf[k] = wave(s, (long)sec * rates[s] + k, rates[s]);
            if (edfwrite_physical_samples(h, buf))
                return -1;
        }
    /* Onsets and durations in units of 100 microseconds (EDFlib's writing API). */
    edfwrite_annotation_utf8(h, 5000, 20000, "grip");     /* 0.5 s, lasting 2 s */
    edfwrite_annotation_utf8(h, 21240, -1, "rest");       /* 2.124 s */
    edfwrite_annotation_utf8(h, 33330, -1, "lights off"); /* 3.333 s */
    return edfclose_file(h);
}

/* EDFlib's own reading of signal s: the reference. */
static double *edflib_read(const char *path, int s, long *n)
{
    struct edf_hdr_struct hdr;
    if (edfopen_file_readonly(path, &hdr, EDFLIB_READ_ALL_ANNOTATIONS))
        return NULL;
    *n = (long)hdr.signalparam[s].smp_in_file;
    double *v = malloc((size_t)*n * sizeof *v);
    if (v && edfread_physical_samples(hdr.handle, s, (int)*n, v) != *n) {
        free(v);
        v = NULL;
    }
    edfclose_file(hdr.handle);
    return v;
}

typedef struct weft_read {
    float data[SECONDS * 1000];
    long n;
    char label[8][64];
    uint64_t index[8];
    double duration[8];
    int n_markers;
} weft_read;

static int weft_play(const char *path, const char *stream, weft_read *w)
{
    char params[512];
    snprintf(params, sizeof params, "{ path: '%s', stream: %s }", path, stream);
    stage_driver sd;
    diag d = { 0 };
    memset(w, 0, sizeof *w);
    if (stage_driver_open(&sd, WEFT_PLUGIN_DIR "/edf.so", params, NULL, 0, &d)) {
        printf("weft could not open %s: %s\n", path, d.msg);
        return -1;
    }
    weft_marker marks[NODE_MARKERS_MAX];
    for (;;) {
        weft_block b = { .data = w->data + w->n, .capacity = 33, .channels = 1,
                         .first_index = (uint64_t)w->n, .markers = marks,
                         .marker_capacity = NODE_MARKERS_MAX };
        if (w->n + 33 > SECONDS * 1000)
            b.capacity = (uint32_t)(SECONDS * 1000 - w->n);
        int rc = sd.n->api->process(sd.n->self, NULL, 0, &b);
        for (uint32_t m = 0; m < b.n_markers && w->n_markers < 8; m++, w->n_markers++) {
            snprintf(w->label[w->n_markers], 64, "%s", marks[m].label);
            w->index[w->n_markers] = marks[m].index;
            w->duration[w->n_markers] = marks[m].duration;
        }
        w->n += b.frames;
        if (rc != WEFT_OK || b.capacity == 0)
            break;
    }
    stage_driver_close(&sd);
    return 0;
}

static void compare(const char *path, int bdf)
{
    static weft_read w;
    char what[256];
    for (int s = 0; s < 2; s++) {
        long n = 0;
        double *ref = edflib_read(path, s, &n);
        const char *stream = s ? "emg" : "eeg";
        if (!ref || weft_play(path, stream, &w)) {
            check(0, "both readers open the file");
            free(ref);
            continue;
        }
        double worst = 0;
        for (long k = 0; k < n && k < w.n; k++)
            if (fabs(ref[k] - w.data[k]) > worst)
                worst = fabs(ref[k] - w.data[k]);
        double range = s ? 1000 : 400;
        snprintf(what, sizeof what, "%s %s: weft reads %ld of %ld samples, largest difference "
                 "%.3g uV (%.2g of the range)", bdf ? "BDF+" : "EDF+", stream, w.n, n, worst,
                 worst / range);
        check(w.n == n && worst <= 1e-6 * range, what);
        free(ref);
        /* Annotations, on this stream's sample of each onset. */
        int rate = rates[s];
        snprintf(what, sizeof what, "%s %s: annotations grip@%d (2 s), rest@%d, 'lights off'@%d",
                 bdf ? "BDF+" : "EDF+", stream, rate / 2, (int)lround(2.124 * rate),
                 (int)lround(3.333 * rate));
        check(w.n_markers == 3 && !strcmp(w.label[0], "grip") &&
                  w.index[0] == (uint64_t)(rate / 2) && fabs(w.duration[0] - 2) < 1e-9 &&
                  !strcmp(w.label[1], "rest") && w.index[1] == (uint64_t)lround(2.124 * rate) &&
                  !strcmp(w.label[2], "lights off") &&
                  w.index[2] == (uint64_t)lround(3.333 * rate),
              what);
    }
}

int main(void)
{
    char path[2][128];
    for (int bdf = 0; bdf < 2; bdf++) {
        snprintf(path[bdf], sizeof path[bdf], "/tmp/weft-edflib-%d.%s", (int)getpid(),
                 bdf ? "bdf" : "edf");
        check(write_file(path[bdf], bdf) == 0, bdf ? "EDFlib writes a BDF+ file"
                                                   : "EDFlib writes an EDF+ file");
        compare(path[bdf], bdf);
        unlink(path[bdf]);
    }
    printf("%d passed, %d failed\n", passed, failed);
    return failed ? 1 : 0;
}
