/* cli_response: `weft response GRAPH STAGE [--to STAGE2]` -- magnitude, phase and group delay
 * of a filter stage or a chain of them, as a table and optionally an SVG plot. */
#include <math.h>
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "response.h"

static const char help[] =
    "usage: weft response GRAPH STAGE [--to STAGE2] [--svg FILE] [--points N]\n"
    "\n"
    "Measures the frequency response of filter STAGE (or of the chain STAGE ... STAGE2,\n"
    "following each stage's first input) from its impulse response: a unit impulse goes into\n"
    "the first input channel, the first output channel is transformed. Works for any filter\n"
    "plugin. Prints frequency (Hz), magnitude (dB), phase (degrees) and group delay (samples\n"
    "and ms) at N log-spaced frequencies up to half the output rate.\n"
    "  --to STAGE2    end of the chain (default: STAGE alone)\n"
    "  --svg FILE     also draw magnitude, phase and group delay to an SVG file\n"
    "  --points N     rows of the table (default 40); the plot uses 10 N points\n"
    "For a chain that changes the rate, magnitudes are scaled by input rate / output rate, so\n"
    "a pass band reads 0 dB. Exit 0 done, 2 usage error, 3 the graph or a stage is not valid.\n";

#define MIN_LENGTH (1u << 16)
#define MAX_LENGTH (1u << 21)

typedef struct response_args {
    const char *graph, *stage, *to, *svg;
    unsigned long points;
} response_args;

static int parse_args(int argc, char **argv, response_args *a)
{
    memset(a, 0, sizeof *a);
    a->points = 40;
    for (int i = 1; i < argc; i++) {
        const char *arg = argv[i];
        if (!strcmp(arg, "--help") || !strcmp(arg, "-h")) {
            fputs(help, stdout);
            return 1;
        } else if (!strcmp(arg, "--to") || !strcmp(arg, "--svg")) {
            if (i + 1 >= argc) {
                fprintf(stderr, "weft response: %s needs a value\n", arg);
                return -1;
            }
            *(arg[2] == 't' ? &a->to : &a->svg) = argv[++i];
        } else if (!strcmp(arg, "--points")) {
            if (cli_count(arg, i + 1 < argc ? argv[++i] : NULL, &a->points))
                return -1;
            if (a->points > 100000) {
                fprintf(stderr, "weft response: --points %lu is more than 100000\n", a->points);
                return -1;
            }
        } else if (arg[0] == '-') {
            fprintf(stderr, "weft response: unknown option '%s'\n\n%s", arg, help);
            return -1;
        } else if (!a->graph) {
            a->graph = arg;
        } else if (!a->stage) {
            a->stage = arg;
        } else {
            fprintf(stderr, "weft response: unexpected argument '%s'\n", arg);
            return -1;
        }
    }
    if (!a->graph || !a->stage) {
        fputs(help, stderr);
        return -1;
    }
    if (cli_check_output("--svg", a->svg, &a->graph, 1))
        return -1;
    return 0;
}

static double freq_at(double lo, double hi, size_t i, size_t n)
{
    return n < 2 ? hi : lo * pow(hi / lo, (double)i / (double)(n - 1));
}

/* Phase and group delay mean nothing where the magnitude is rounding noise: more than 100 dB
 * below the largest magnitude. */
#define MEANINGFUL 1e-5

static double peak_magnitude(const response *r)
{
    double peak = 0;
    for (size_t k = 0; k < r->bins; k++)
        peak = fmax(peak, r->magnitude[k]);
    return peak;
}

static void print_table(const response *r, const response_args *a, double lo)
{
    double hi = r->out_rate / 2, floor_m = peak_magnitude(r) * MEANINGFUL;
    printf("# %14s %14s %12s %14s %12s\n", "frequency_hz", "magnitude_db", "phase_deg",
           "delay_samples", "delay_ms");
    for (size_t i = 0; i < a->points; i++) {
        double f = freq_at(lo, hi, i, a->points), m, ph, dl;
        response_at(r, f, &m, &ph, &dl);
        if (m < floor_m)
            printf("  %14.6g %14.4f %12s %14s %12s\n", f, m > 0 ? 20 * log10(m) : -INFINITY,
                   "-", "-", "-");
        else
            printf("  %14.6g %14.4f %12.3f %14.4f %12.4f\n", f, 20 * log10(m),
                   ph * 180 / WEFT_PI, dl, dl / r->out_rate * 1000);
    }
}

/* ---- the SVG plot: three panels over a shared logarithmic frequency axis ---------------- */

#define SVG_W 860
#define PANEL_H 230
#define LEFT 80
#define RIGHT 30
#define TOP 60
#define GAP 50

typedef struct panel {
    const char *title, *unit;
    double y0, y1, step;        /* value range and grid spacing */
    int top;                    /* pixel row of the panel's top */
} panel;

static double px_x(double f, double lo, double hi)
{
    return LEFT + (SVG_W - LEFT - RIGHT) * log10(f / lo) / log10(hi / lo);
}

static double px_y(const panel *p, double v)
{
    if (v < p->y0)
        v = p->y0;
    if (v > p->y1)
        v = p->y1;
    return p->top + PANEL_H * (p->y1 - v) / (p->y1 - p->y0);
}

static void svg_panel(FILE *o, const panel *p, double lo, double hi)
{
    fprintf(o, "<rect x='%d' y='%d' width='%d' height='%d' fill='white' stroke='#444'/>\n",
            LEFT, p->top, SVG_W - LEFT - RIGHT, PANEL_H);
    fprintf(o, "<text x='%d' y='%d' font-size='14' font-weight='bold'>%s</text>\n", LEFT,
            p->top - 8, p->title);
    for (double v = ceil(p->y0 / p->step) * p->step; v <= p->y1 + 1e-9; v += p->step) {
        double y = px_y(p, v);
        fprintf(o, "<line x1='%d' y1='%.1f' x2='%d' y2='%.1f' stroke='#ddd'/>\n", LEFT, y,
                SVG_W - RIGHT, y);
        fprintf(o, "<text x='%d' y='%.1f' font-size='11' text-anchor='end'>%g</text>\n",
                LEFT - 6, y + 4, fabs(v) < 1e-9 ? 0.0 : v);
    }
    fprintf(o, "<text x='18' y='%d' font-size='12' transform='rotate(-90 18 %d)' "
            "text-anchor='middle'>%s</text>\n", p->top + PANEL_H / 2, p->top + PANEL_H / 2,
            p->unit);
    /* Decades and the 2 and 5 between them. */
    for (double dec = pow(10, floor(log10(lo))); dec <= hi; dec *= 10)
        for (int m = 1; m <= 5; m += m == 1 ? 1 : 3) {
            double f = dec * m;
            if (f < lo || f > hi)
                continue;
            double x = px_x(f, lo, hi);
            fprintf(o, "<line x1='%.1f' y1='%d' x2='%.1f' y2='%d' stroke='%s'/>\n", x, p->top,
                    x, p->top + PANEL_H, m == 1 ? "#bbb" : "#e6e6e6");
            fprintf(o, "<text x='%.1f' y='%d' font-size='11' text-anchor='middle'>%g</text>\n",
                    x, p->top + PANEL_H + 14, f);
        }
}

/* One polyline per run of meaningful points (phase and delay break off in deep stop bands). */
static void svg_curve(FILE *o, const response *r, const panel *p, double lo, double hi,
                      size_t n, int which)
{
    double floor_m = peak_magnitude(r) * MEANINGFUL;
    int open = 0;
    for (size_t i = 0; i < n; i++) {
        double f = freq_at(lo, hi, i, n), m, ph, dl;
        response_at(r, f, &m, &ph, &dl);
        double v = which == 0 ? (m > 0 ? 20 * log10(m) : p->y0)
                   : which == 1 ? ph * 180 / WEFT_PI : dl / r->out_rate * 1000;
        int ok = isfinite(v) && (which == 0 || m >= floor_m);
        if (ok && !open)
            fprintf(o, "<polyline fill='none' stroke='#1f5fbf' stroke-width='1.6' points='");
        if (ok)
            fprintf(o, "%.1f,%.1f ", px_x(f, lo, hi), px_y(p, v));
        if (!ok && open)
            fprintf(o, "'/>\n");
        open = ok;
    }
    if (open)
        fprintf(o, "'/>\n");
}

/* Ranges: magnitude from its peak down to 100 dB below (at most); group delay over the
 * frequencies within 40 dB of the peak, where it means something. */
static void ranges(const response *r, double lo, double hi, size_t n, panel *mag, panel *del)
{
    double peak = -INFINITY;
    for (size_t i = 0; i < n; i++) {
        double m, ph, dl;
        response_at(r, freq_at(lo, hi, i, n), &m, &ph, &dl);
        if (m > 0 && 20 * log10(m) > peak)
            peak = 20 * log10(m);
    }
    if (!isfinite(peak))
        peak = 0;
    double dmin = INFINITY, dmax = -INFINITY;
    for (size_t i = 0; i < n; i++) {
        double m, ph, dl;
        response_at(r, freq_at(lo, hi, i, n), &m, &ph, &dl);
        if (m > 0 && 20 * log10(m) > peak - 40 && isfinite(dl)) {
            dmin = fmin(dmin, dl / r->out_rate * 1000);
            dmax = fmax(dmax, dl / r->out_rate * 1000);
        }
    }
    mag->y1 = ceil((peak + 5) / 10) * 10;
    mag->y0 = mag->y1 - 110;
    mag->step = 10;
    if (!(dmin <= dmax)) {
        dmin = 0;
        dmax = 1;
    }
    double span = dmax - dmin < 1e-3 ? 1 : dmax - dmin;
    double step = pow(10, floor(log10(span)));
    if (span / step < 3)
        step /= 2;
    del->y0 = floor((dmin - 0.05 * span) / step) * step;
    del->y1 = ceil((dmax + 0.05 * span) / step) * step;
    del->step = step;
}

static int write_svg(const char *file, const response *r, const response_args *a, double lo)
{
    FILE *o = fopen(file, "w");
    if (!o) {
        fprintf(stderr, "weft: cannot write %s: %s\n", file, strerror(errno));
        return -1;
    }
    double hi = r->out_rate / 2;
    size_t n = 10 * a->points;
    panel mag = { "Magnitude", "dB", 0, 0, 10, TOP };
    panel ph = { "Phase", "degrees", -180, 180, 90, TOP + PANEL_H + GAP };
    panel del = { "Group delay", "ms", 0, 1, 1, TOP + 2 * (PANEL_H + GAP) };
    ranges(r, lo, hi, n, &mag, &del);
    int height = TOP + 3 * PANEL_H + 2 * GAP + 50;
    fprintf(o, "<?xml version='1.0' encoding='UTF-8'?>\n<svg xmlns='http://www.w3.org/2000/svg' "
            "width='%d' height='%d' font-family='sans-serif'>\n", SVG_W, height);
    fprintf(o, "<rect width='100%%' height='100%%' fill='#fafafa'/>\n");
    fprintf(o, "<text x='%d' y='28' font-size='16'>%s: stage '%s'%s%s%s (output at %g Hz)"
            "</text>\n", LEFT, a->graph, a->stage, a->to ? " to '" : "", a->to ? a->to : "",
            a->to ? "'" : "", r->out_rate);
    const panel *panels[3] = { &mag, &ph, &del };
    for (int k = 0; k < 3; k++) {
        svg_panel(o, panels[k], lo, hi);
        svg_curve(o, r, panels[k], lo, hi, n, k);
    }
    fprintf(o, "<text x='%d' y='%d' font-size='12' text-anchor='middle'>frequency (Hz, "
            "logarithmic)</text>\n</svg>\n", (LEFT + SVG_W - RIGHT) / 2, height - 12);
    if (fclose(o)) {
        fprintf(stderr, "weft: cannot write %s: %s\n", file, strerror(errno));
        return -1;
    }
    return 0;
}

/* Open the graph and measure; a longer impulse response if this one had not died out. */
static int measure(const response_args *a, graph *g, response *r, diag *d)
{
    int first = graph_find(g, a->stage), last = graph_find(g, a->to ? a->to : a->stage);
    if (first < 0 || last < 0)
        return diag_set(d, "%s: no stage called '%s'", a->graph, first < 0 ? a->stage : a->to);
    for (size_t length = MIN_LENGTH;; length *= 4) {
        pipeline pl;
        pipeline_options opt = { .for_fit = 1 };
        if (pipeline_open(&pl, g, &opt, d))
            return -1;
        int rc = response_measure(&pl, (unsigned)first, (unsigned)last, length, r, d);
        pipeline_close(&pl);
        if (rc)
            return -1;
        if (r->tail_energy < 1e-9 || length * 4 > MAX_LENGTH)
            return 0;
        response_free(r);
    }
}

int cli_response(int argc, char **argv)
{
    response_args a;
    int rc = parse_args(argc, argv, &a);
    if (rc)
        return rc > 0 ? EXIT_OK : EXIT_USAGE;
    diag d = { 0 };
    graph g;
    response r;
    if (graph_load(&g, a.graph, NULL, &d) || measure(&a, &g, &r, &d)) {
        fprintf(stderr, "weft: %s\n", d.msg);
        graph_free(&g);
        return EXIT_INVALID;
    }
    /* From 1e-4 of the output rate (0.025 Hz at 250 Hz), no finer than the measurement resolves. */
    double lo = fmax(r.out_rate * 1e-4, r.out_rate / (double)r.length * 4);
    printf("# response of '%s'%s%s%s: %g Hz in, %g Hz out; impulse response of %zu samples\n",
           a.stage, a.to ? " to '" : "", a.to ? a.to : "", a.to ? "'" : "", r.in_rate,
           r.out_rate, r.length);
    if (r.tail_energy >= 1e-9)
        printf("# note: %.2g of the energy is in the last tenth of the impulse response; below "
               "%g Hz the figures are approximate\n", r.tail_energy, 10 * lo);
    print_table(&r, &a, lo);
    rc = a.svg ? write_svg(a.svg, &r, &a, lo) : 0;
    if (rc == 0 && a.svg)
        fprintf(stderr, "weft: wrote %s\n", a.svg);
    response_free(&r);
    graph_free(&g);
    return rc ? EXIT_FAILED : EXIT_OK;
}
