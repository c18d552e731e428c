/* filter_tool: weft's numbers for the reference checks in tests/reference/.
 *   filter_tool run PLUGIN PARAMS CHANNELS RATE BLOCK   < in.f32 > out.f32
 *       drive one filter plugin (a .so path) with PARAMS (YAML map) over interleaved float32
 *       from stdin, BLOCK frames per call, and write its float32 output to stdout; the output
 *       layout goes to stderr as "layout: rate R channels C max_frames M".
 *   filter_tool butter KIND ORDER RATE F1 [F2]
 *       print the designed second-order sections, one per line: b0 b1 b2 1 a1 a2 (%.17g).
 *   filter_tool notch FREQ Q RATE
 *       print the notch section the same way.
 *   filter_tool fir KIND hamming|blackman|kaiser TAPS RATE BETA F1 [F2]
 *       print the windowed-sinc taps, one per line (%.17g).
 *   filter_tool kaiser RIPPLE WIDTH RATE
 *       print Kaiser's taps and beta for that ripple (dB) and transition width (Hz). */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "butter_design.h"
#include "fir_design.h"
#include "notch_design.h"
#include "stage_driver.h"

static int usage(void)
{
    fputs("usage: filter_tool run PLUGIN PARAMS CHANNELS RATE BLOCK < in.f32 > out.f32\n"
          "       filter_tool butter lowpass|highpass|bandpass|bandstop ORDER RATE F1 [F2]\n"
          "       filter_tool notch FREQ Q RATE\n"
          "       filter_tool fir KIND WINDOW TAPS RATE BETA F1 [F2]\n"
          "       filter_tool kaiser RIPPLE WIDTH RATE\n",
          stderr);
    return 2;
}

static float *read_all(size_t *count)
{
    size_t cap = 1 << 16, n = 0;
    float *buf = malloc(cap * sizeof *buf);
    while (buf) {
        if (n == cap) {
            float *bigger = realloc(buf, 2 * cap * sizeof *buf);
            if (!bigger) {
                free(buf);
                return NULL;
            }
            buf = bigger;
            cap *= 2;
        }
        size_t got = fread(buf + n, sizeof *buf, cap - n, stdin);
        n += got;
        if (got == 0)
            break;
    }
    *count = n;
    return buf;
}

static int run(const char *plugin, const char *params, uint32_t channels, double rate,
               uint32_t block)
{
    size_t count;
    float *in = read_all(&count);
    if (!in || channels == 0 || block == 0 || count % channels) {
        fprintf(stderr, "filter_tool: input is not whole frames of %u channels\n", channels);
        return 1;
    }
    weft_layout layout = { .kind = WEFT_STREAM_SAMPLES, .channels = channels, .rate = rate,
                           .max_frames = block };
    stage_driver sd;
    diag d = { 0 };
    if (stage_driver_open(&sd, plugin, params, &layout, 1, &d)) {
        fprintf(stderr, "filter_tool: %s\n", d.msg);
        stage_driver_close(&sd);
        free(in);
        return 1;
    }
    const weft_layout *out = stage_driver_out(&sd);
    fprintf(stderr, "layout: rate %.17g channels %u max_frames %u\n", out->rate, out->channels,
            out->max_frames);
    float *buf = malloc((size_t)out->max_frames * out->channels * sizeof *buf);
    size_t frames = count / channels;
    int rc = buf ? 0 : 1;
    for (size_t at = 0; rc == 0 && at < frames; at += block) {
        uint32_t n = frames - at < block ? (uint32_t)(frames - at) : block;
        long got = stage_driver_process(&sd, in + at * channels, n, buf, out->max_frames, &d);
        if (got < 0) {
            fprintf(stderr, "filter_tool: %s\n", d.msg);
            rc = 1;
        } else if (fwrite(buf, sizeof *buf, (size_t)got * out->channels, stdout) !=
                   (size_t)got * out->channels) {
            rc = 1;
        }
    }
    stage_driver_close(&sd);
    free(buf);
    free(in);
    return rc;
}

static void print_sections(const sos_coef *s, int n)
{
    for (int i = 0; i < n; i++)
        printf("%.17g %.17g %.17g 1 %.17g %.17g\n", s[i].b0, s[i].b1, s[i].b2, s[i].a1, s[i].a2);
}

static int butter(int argc, char **argv)
{
    const char *kinds[] = { "lowpass", "highpass", "bandpass", "bandstop" };
    int kind = -1;
    for (int i = 0; i < 4; i++)
        if (!strcmp(argv[0], kinds[i]))
            kind = i;
    if (kind < 0 || argc < 4)
        return usage();
    sos_coef s[BUTTER_MAX_SECTIONS];
    int n = butter_design((butter_kind)kind, atoi(argv[1]), atof(argv[2]), atof(argv[3]),
                          argc > 4 ? atof(argv[4]) : 0, s);
    if (n < 0) {
        fputs("filter_tool: butter_design refused the arguments\n", stderr);
        return 1;
    }
    print_sections(s, n);
    return 0;
}

static int fir(int argc, char **argv)
{
    const char *kinds[] = { "lowpass", "highpass", "bandpass", "bandstop" };
    const char *windows[] = { "hamming", "blackman", "kaiser" };
    int kind = -1, window = -1;
    for (int i = 0; i < 4; i++)
        if (!strcmp(argv[0], kinds[i]))
            kind = i;
    for (int i = 0; i < 3; i++)
        if (!strcmp(argv[1], windows[i]))
            window = i;
    int taps = atoi(argv[2]);
    if (kind < 0 || window < 0 || taps < 1 || argc < 6)
        return usage();
    double *h = malloc((size_t)taps * sizeof *h);
    if (!h || fir_windowed_sinc((fir_kind)kind, atof(argv[5]), argc > 6 ? atof(argv[6]) : 0,
                                atof(argv[3]), (fir_window)window, atof(argv[4]), taps, h)) {
        fputs("filter_tool: fir_windowed_sinc refused the arguments\n", stderr);
        free(h);
        return 1;
    }
    for (int i = 0; i < taps; i++)
        printf("%.17g\n", h[i]);
    free(h);
    return 0;
}

int main(int argc, char **argv)
{
    if (argc >= 7 && !strcmp(argv[1], "run"))
        return run(argv[2], argv[3], (uint32_t)atoi(argv[4]), atof(argv[5]),
                   (uint32_t)atoi(argv[6]));
    if (argc >= 6 && !strcmp(argv[1], "butter"))
        return butter(argc - 2, argv + 2);
    if (argc == 5 && !strcmp(argv[1], "notch")) {
        sos_coef s = notch_design(atof(argv[2]), atof(argv[3]), atof(argv[4]));
        print_sections(&s, 1);
        return 0;
    }
    if (argc >= 8 && !strcmp(argv[1], "fir"))
        return fir(argc - 2, argv + 2);
    if (argc == 5 && !strcmp(argv[1], "kaiser")) {
        double a = atof(argv[2]);
        printf("%.17g %.17g\n", fir_kaiser_taps(a, atof(argv[3]), atof(argv[4])),
               fir_kaiser_beta(a));
        return 0;
    }
    return usage();
}
