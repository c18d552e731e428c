/* report_html: the replay report as one HTML page with inline SVG -- readable offline, mailed
 * as a file, with nothing fetched from anywhere. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "report.h"

#define HIST_BINS 20

/* Colour-blind-safe qualitative palette (Okabe and Ito 2008). */
static const char *const palette[] = { "#0072B2", "#D55E00", "#009E73", "#CC79A7",
                                       "#E69F00", "#56B4E9", "#F0E442", "#000000" };
#define PALETTE_N (sizeof palette / sizeof palette[0])

static void html_text(FILE *f, const char *s)
{
    for (; *s; s++) {
        switch (*s) {
        case '<': fputs("&lt;", f); break;
        case '>': fputs("&gt;", f); break;
        case '&': fputs("&amp;", f); break;
        case '"': fputs("&quot;", f); break;
        default: fputc(*s, f);
        }
    }
}

static void figure(FILE *f, double v, const char *format)
{
    if (isfinite(v))
        fprintf(f, format, v);
    else
        fputs("&ndash;", f);
}

static void value_range(const replay_readout *ro, double *lo, double *hi)
{
    *lo = 0;
    *hi = 1;
    for (size_t i = 0; i < ro->n_results * ro->n_classes; i++) {
        if (ro->values[i] < *lo)
            *lo = ro->values[i];
        if (ro->values[i] > *hi)
            *hi = ro->values[i];
    }
}

static void time_course(FILE *f, const replay *r, const replay_readout *ro)
{
    double seconds = r->stats.stream_seconds > 0 ? r->stats.stream_seconds : 1;
    double width = seconds * 12 < 900 ? 900 : (seconds * 12 > 8000 ? 8000 : seconds * 12);
    double height = 220, left = 40, top = 10, plot_h = 170, plot_w = width - left - 10;
    double lo, hi;
    value_range(ro, &lo, &hi);
#define X(t) (left + (t) / seconds * plot_w)
#define Y(v) (top + plot_h - ((v) - lo) / (hi - lo) * plot_h)
    fprintf(f, "<div class=scroll><svg xmlns='http://www.w3.org/2000/svg' width='%.0f' "
            "height='%.0f' font-size='11'>\n", width, height);
    /* Scored windows and cues, coloured by the cue's class. */
    for (size_t i = 0; i < r->n_cues; i++) {
        int cls = replay_cue_class(r, ro, r->cues[i].label);
        if (cls < 0)
            continue;
        const char *colour = palette[(unsigned)cls % PALETTE_N];
        double t = r->cues[i].time;
        double end = ro->score_to >= 0 ? t + ro->score_to
                                       : (r->cues[i].duration > 0 ? t + r->cues[i].duration
                                                                  : t);
        if (end > t + ro->score_from)
            fprintf(f, "<rect x='%.1f' y='%.1f' width='%.1f' height='%.1f' fill='%s' "
                    "opacity='0.12'/>\n", X(t + ro->score_from), top,
                    X(end) - X(t + ro->score_from), plot_h, colour);
        fprintf(f, "<line x1='%.1f' x2='%.1f' y1='%.1f' y2='%.1f' stroke='%s'/>"
                "<text x='%.1f' y='%.1f' fill='%s'>", X(t), X(t), top, top + plot_h, colour,
                X(t) + 2, top + 10, colour);
        html_text(f, r->cues[i].label);
        fputs("</text>\n", f);
    }
    for (unsigned k = 0; k < ro->n_classes; k++) {
        fprintf(f, "<polyline fill='none' stroke='%s' stroke-width='1.2' points='",
                palette[k % PALETTE_N]);
        for (size_t i = 0; i < ro->n_results; i++)
            fprintf(f, "%.1f,%.1f ", X(ro->results[i].time),
                    Y(ro->values[i * ro->n_classes + k]));
        fputs("'/>\n", f);
    }
    fprintf(f, "<line x1='%.0f' x2='%.0f' y1='%.0f' y2='%.0f' stroke='#444'/>"
            "<line x1='%.0f' x2='%.0f' y1='%.0f' y2='%.0f' stroke='#444'/>\n", left, left, top,
            top + plot_h, left, left + plot_w, top + plot_h, top + plot_h);
    fprintf(f, "<text x='2' y='%.0f'>%.3g</text><text x='2' y='%.0f'>%.3g</text>\n",
            top + 10, hi, top + plot_h, lo);
    for (double t = 0; t <= seconds; t += seconds > 120 ? 30 : 10)
        fprintf(f, "<text x='%.1f' y='%.0f'>%.0f s</text>\n", X(t), top + plot_h + 14, t);
    fputs("</svg></div>\n", f);
#undef X
#undef Y
}

static void confusion(FILE *f, const replay_readout *ro, const metrics *m, const char *title)
{
    unsigned n = ro->n_classes;
    double cell = 56, left = 90, top = 40;
    fprintf(f, "<svg xmlns='http://www.w3.org/2000/svg' width='%.0f' height='%.0f' "
            "font-size='12'><text x='0' y='14' font-weight='bold'>", left + cell * n + 110,
            top + cell * n + 24);
    html_text(f, title);
    fputs("</text>\n", f);
    for (unsigned t = 0; t < n; t++) {
        unsigned row = 0;
        for (unsigned p = 0; p < n; p++)
            row += m->confusion ? m->confusion[t * n + p] : 0;
        fprintf(f, "<text x='0' y='%.0f'>", top + cell * t + cell / 2 + 4);
        html_text(f, ro->class_names[t]);
        fprintf(f, "</text><text x='%.0f' y='%.0f' font-size='10'>", left + cell * t + 4,
                top - 6);
        html_text(f, ro->class_names[t]);
        fputs("</text>\n", f);
        for (unsigned p = 0; p < n; p++) {
            unsigned c = m->confusion ? m->confusion[t * n + p] : 0;
            double share = row ? (double)c / row : 0;
            fprintf(f, "<rect x='%.0f' y='%.0f' width='%.0f' height='%.0f' fill='#0072B2' "
                    "fill-opacity='%.2f' stroke='#888'/><text x='%.0f' y='%.0f' "
                    "text-anchor='middle'>%u</text>\n", left + cell * p, top + cell * t, cell,
                    cell, 0.08 + 0.8 * share, left + cell * p + cell / 2,
                    top + cell * t + cell / 2 + 4, c);
        }
    }
    fprintf(f, "<text x='%.0f' y='%.0f' font-size='10'>rows: true class, columns: "
            "predicted</text></svg>\n", left, top + cell * n + 16);
}

/* Two classes: the score (value of the second class) by true class. More: the value of the
 * true class by true class. */
static void histograms(FILE *f, const replay *r, const replay_readout *ro)
{
    unsigned n = ro->n_classes, counts[METRICS_MAX_CLASSES][HIST_BINS] = { { 0 } }, peak = 1;
    double lo, hi;
    value_range(ro, &lo, &hi);
    for (size_t i = 0; i < ro->n_results && n <= METRICS_MAX_CLASSES; i++) {
        if (ro->results[i].cue < 0)
            continue;
        int t = replay_cue_class(r, ro, r->cues[ro->results[i].cue].label);
        double v = ro->values[i * n + (n == 2 ? 1 : (unsigned)t)];
        int b = (int)((v - lo) / (hi - lo) * HIST_BINS);
        b = b < 0 ? 0 : (b >= HIST_BINS ? HIST_BINS - 1 : b);
        if (++counts[t][b] > peak)
            peak = counts[t][b];
    }
    double w = 420, h = 160, left = 30, top = 20, bar = (w - left - 10) / HIST_BINS;
    fprintf(f, "<svg xmlns='http://www.w3.org/2000/svg' width='%.0f' height='%.0f' "
            "font-size='11'><text x='0' y='12' font-weight='bold'>%s by true class</text>\n",
            w, h + 56, n == 2 ? "score (value of the second class)" : "value of the true class");
    for (unsigned t = 0; t < n && t < METRICS_MAX_CLASSES; t++) {
        for (unsigned b = 0; b < HIST_BINS; b++) {
            double bh = (double)counts[t][b] / peak * h;
            if (counts[t][b])
                fprintf(f, "<rect x='%.1f' y='%.1f' width='%.1f' height='%.1f' fill='%s' "
                        "opacity='0.5'/>\n", left + bar * b, top + h - bh, bar - 1, bh,
                        palette[t % PALETTE_N]);
        }
        fprintf(f, "<text x='%.0f' y='%.0f' fill='%s'>", left + 8 + 90 * t, top + h + 30,
                palette[t % PALETTE_N]);
        html_text(f, ro->class_names[t]);
        fputs("</text>\n", f);
    }
    fprintf(f, "<line x1='%.0f' x2='%.0f' y1='%.0f' y2='%.0f' stroke='#444'/><text x='%.0f' "
            "y='%.0f'>%.3g</text><text x='%.0f' y='%.0f' text-anchor='end'>%.3g</text></svg>\n",
            left, w - 10, top + h, top + h, left, top + h + 14, lo, w - 10, top + h + 14, hi);
}

static void metrics_row(FILE *f, const char *what, const metrics *m, int itr)
{
    fprintf(f, "<tr><td>%s</td><td>%zu</td><td>", what, m->n);
    figure(f, m->accuracy, "%.3f");
    fputs("</td><td>", f);
    figure(f, m->balanced_accuracy, "%.3f");
    fputs("</td><td>", f);
    figure(f, m->auc, "%.3f");
    fputs("</td><td>", f);
    if (itr) {
        figure(f, m->n ? m->itr_bits : NAN, "%.3f bits, ");
        figure(f, m->itr_bits_per_minute, "%.2f bits/min");
    } else {
        fputs("&ndash;", f);
    }
    fputs("</td></tr>\n", f);
}

static void readout_section(FILE *f, const replay *r, const replay_readout *ro)
{
    fputs("<h2>Readout <code>", f);
    html_text(f, ro->name);
    fprintf(f, "</code></h2>\n<p>%zu results, %zu trials scored. Periodic results count from "
            "%.3g s after a cue to ", ro->n_results, ro->n_trials, ro->score_from);
    if (ro->score_to >= 0)
        fprintf(f, "%.3g s after it", ro->score_to);
    else
        fputs("the end of the cue's duration (or the next cue)", f);
    fputs("; results triggered by a marker belong to that marker's trial.</p>\n<table><tr><th>"
          "</th><th>n</th><th>accuracy</th><th>balanced accuracy</th><th>ROC AUC</th>"
          "<th>information transfer rate</th></tr>\n", f);
    metrics_row(f, "results", &ro->per_result, 0);
    metrics_row(f, "trials (mean of each trial's results)", &ro->per_trial, 1);
    fputs("</table>\n<h3>Values over time</h3>\n<p class=legend>", f);
    for (unsigned k = 0; k < ro->n_classes; k++) {
        fprintf(f, "<span style='color:%s'>&#9644; ", palette[k % PALETTE_N]);
        html_text(f, ro->class_names[k]);
        fputs("</span> ", f);
    }
    fputs("&nbsp; vertical lines: cues; shaded: the span whose periodic results are scored"
          "</p>\n", f);
    time_course(f, r, ro);
    fputs("<div class=row>", f);
    confusion(f, ro, &ro->per_result, "results");
    confusion(f, ro, &ro->per_trial, "trials");
    histograms(f, r, ro);
    fputs("</div>\n", f);
}

int report_html(FILE *f, const replay *r, const char *graph_path)
{
    const latency *l = &r->stats.round_us;
    fputs("<!DOCTYPE html>\n<html lang=en><head><meta charset='utf-8'><title>weft replay: ", f);
    html_text(f, graph_path);
    fputs("</title>\n<style>body{font-family:sans-serif;margin:2em;max-width:1200px}"
          "table{border-collapse:collapse}td,th{border:1px solid #ccc;padding:3px 8px;"
          "text-align:right}td:first-child{text-align:left}.scroll{overflow-x:auto}"
          ".row{display:flex;flex-wrap:wrap;gap:24px;align-items:flex-start}"
          ".note{color:#555;font-size:90%}</style></head><body>\n<h1>Replay report</h1>\n"
          "<p>Graph <code>", f);
    html_text(f, graph_path);
    fputs("</code> on recording <code>", f);
    html_text(f, r->opt.data);
    fprintf(f, "</code>: %.1f s of data, %zu markers, %llu results.</p>\n", 
            r->stats.stream_seconds, r->n_cues, (unsigned long long)r->stats.results);
    if (r->folds) {
        fprintf(f, "<p>Chronological cross-validation in %u blocks: each block from the second "
                "on was replayed through the graph fitted on the data before it.</p><ul>\n",
                r->folds);
        for (unsigned k = 1; k < r->folds; k++) {
            fprintf(f, "<li>block %u: fitted on 0&ndash;%.1f s, tested from %.1f s%s", k + 1,
                    r->fold[k].from, r->fold[k].from, r->fold[k].tested ? "" : ": skipped, ");
            if (!r->fold[k].tested)
                html_text(f, r->fold[k].skipped);
            fputs("</li>\n", f);
        }
        fputs("</ul>\n", f);
    }
    for (unsigned i = 0; i < r->n_readouts; i++)
        readout_section(f, r, &r->readouts[i]);
    fprintf(f, "<h2>Processing time per round</h2>\n<p>%llu rounds: median %.0f &micro;s, "
            "90%% %.0f &micro;s, 99%% %.0f &micro;s, longest %.0f &micro;s (%s).</p>\n",
            (unsigned long long)l->n, latency_quantile(l, 0.5), latency_quantile(l, 0.9),
            latency_quantile(l, 0.99), l->max_us,
            r->opt.realtime ? "paced as live" : "as fast as possible");
    fputs("<p class=note>Definitions: accuracy and balanced accuracy (mean recall over the "
          "classes present) as in scikit-learn; ROC AUC as the Mann-Whitney statistic (Hanley "
          "and McNeil 1982); information transfer rate after Wolpaw et al. 2002, one selection "
          "per trial, at the mean interval between cues. Research use only: weft is not a "
          "medical device, and figures from a replay do not show that a closed loop is safe "
          "to run on a person.</p>\n</body></html>\n", f);
    return ferror(f) ? -1 : 0;
}
