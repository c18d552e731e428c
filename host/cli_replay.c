/* cli_replay: `weft replay GRAPH --data REC` -- run a graph on a recording as it runs live and
 * score its readouts against the recording's cues. */
#include <math.h>
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cli.h"
#include "report.h"

static const char help[] =
    "usage: weft replay GRAPH --data RECORDING [--report FILE.html] [--json FILE]\n"
    "                   [--from S] [--to S] [--folds K] [--realtime] [--block N] [--quiet]\n"
    "\n"
    "Runs GRAPH on RECORDING (EDF+ or BDF+) exactly as it runs live: every source stage plays\n"
    "the recording's stream of the same name (stage 'eeg' plays signals 'eeg.*'), the first\n"
    "source plays its annotations as markers, sinks run, recorders are left out. Then each\n"
    "readout's results are scored against the cues (markers naming its classes).\n"
    "  --data FILE    the recording\n"
    "  --report FILE  write an HTML report with plots\n"
    "  --json FILE    write the metrics and every scored prediction as JSON (- for stdout)\n"
    "  --from S       score periodic results from S seconds after each cue (default: the\n"
    "                 readout's longest window)\n"
    "  --to S         ... up to S seconds after it (default: the cue's duration)\n"
    "  --folds K      chronological cross-validation: cut the recording into K blocks of\n"
    "                 equal length; fit the graph (as weft fit does) on the data before each\n"
    "                 block and replay it through the block; score blocks 2 .. K together\n"
    "  --realtime     pace the recording to the wall clock, as live\n"
    "  --block N      frames per source request (any value gives the same results)\n"
    "  --quiet        no summary and no progress bar\n"
    "Results triggered by a marker belong to that marker's trial. See docs/recordings.md for\n"
    "the definitions. Exit 0 done, 1 the run failed, 2 usage error, 3 the graph is not valid.\n";

typedef struct replay_args {
    const char *graph, *report, *json;
    replay_options opt;
    unsigned long block, folds;
    int quiet;
} replay_args;

static int parse_seconds(const char *opt, const char *text, double *out)
{
    char *end = NULL;
    double v = text ? strtod(text, &end) : NAN;
    if (!text || !*text || *end || !isfinite(v) || v < 0) {
        fprintf(stderr, "weft: %s needs seconds >= 0, not '%s'\n", opt, text ? text : "");
        return -1;
    }
    *out = v;
    return 0;
}

static int parse_args(int argc, char **argv, replay_args *a)
{
    memset(a, 0, sizeof *a);
    a->opt.score_from = a->opt.score_to = NAN;
    for (int i = 1; i < argc; i++) {
        const char *arg = argv[i], *next = i + 1 < argc ? argv[i + 1] : NULL;
        if (!strcmp(arg, "--help") || !strcmp(arg, "-h")) {
            fputs(help, stdout);
            return 1;
        } else if (!strcmp(arg, "--data") && next) {
            a->opt.data = argv[++i];
        } else if (!strcmp(arg, "--report") && next) {
            a->report = argv[++i];
        } else if (!strcmp(arg, "--json") && next) {
            a->json = argv[++i];
        } else if (!strcmp(arg, "--from")) {
            if (parse_seconds(arg, next, &a->opt.score_from))
                return -1;
            i++;
        } else if (!strcmp(arg, "--to")) {
            if (parse_seconds(arg, next, &a->opt.score_to))
                return -1;
            i++;
        } else if (!strcmp(arg, "--folds")) {
            if (cli_count(arg, next, &a->folds))
                return -1;
            i++;
        } else if (!strcmp(arg, "--realtime")) {
            a->opt.realtime = 1;
        } else if (!strcmp(arg, "--quiet")) {
            a->quiet = 1;
        } else if (!strcmp(arg, "--block")) {
            if (cli_count(arg, next, &a->block))
                return -1;
            i++;
            if (a->block > (1u << 20)) {
                fprintf(stderr, "weft: --block %lu is more than 1048576 frames\n", a->block);
                return -1;
            }
        } else if (arg[0] == '-') {
            fprintf(stderr, "weft replay: unknown option '%s' (or it lacks its value)\n\n%s",
                    arg, help);
            return -1;
        } else if (!a->graph) {
            a->graph = arg;
        } else {
            fprintf(stderr, "weft replay: one graph at a time ('%s' and '%s')\n", a->graph, arg);
            return -1;
        }
    }
    if (!a->graph || !a->opt.data) {
        fprintf(stderr, "weft replay: %s\n\n%s", a->graph ? "--data RECORDING is required"
                                                          : "which graph?", help);
        return -1;
    }
    if (!isnan(a->opt.score_from) && !isnan(a->opt.score_to) &&
        a->opt.score_from >= a->opt.score_to) {
        fprintf(stderr, "weft replay: --from %g s must be before --to %g s: the scoring window "
                "after each cue would be empty\n", a->opt.score_from, a->opt.score_to);
        return -1;
    }
    const char *inputs[] = { a->graph, a->opt.data };
    if (cli_check_output("--json", a->json, inputs, 2) ||
        cli_check_output("--report", a->report, inputs, 2))
        return -1;
    a->opt.block = (uint32_t)a->block;
    a->opt.progress = !a->quiet && isatty(STDERR_FILENO);
    return 0;
}

static void print_metrics(FILE *f, const char *what, const metrics *m)
{
    fprintf(f, "  %-8s n %zu  accuracy %.3f  balanced %.3f", what, m->n, m->accuracy,
            m->balanced_accuracy);
    if (isfinite(m->auc))
        fprintf(f, "  AUC %.3f", m->auc);
    fputc('\n', f);
}

static void print_folds(FILE *f, const replay *r)
{
    for (unsigned k = 1; k < r->folds; k++) {
        const replay_fold *fo = &r->fold[k];
        fprintf(f, "fold %u: fitted on 0-%.1f s, tested on %.1f-", k + 1, fo->from, fo->from);
        if (isfinite(fo->to))
            fprintf(f, "%.1f s", fo->to);
        else
            fprintf(f, "end");
        fprintf(f, "%s%s\n", fo->tested ? "" : ": skipped, ", fo->tested ? "" : fo->skipped);
    }
}

static void print_summary(FILE *f, const replay *r)
{
    if (r->folds)
        print_folds(f, r);
    for (unsigned i = 0; i < r->n_readouts; i++) {
        const replay_readout *ro = &r->readouts[i];
        fprintf(f, "readout '%s': %zu results, %zu trials scored\n", ro->name, ro->n_results,
                ro->n_trials);
        if (!ro->n_trials) {
            fprintf(f, "  no marker names one of its classes (%s%s), so nothing was scored\n",
                    ro->n_classes ? ro->class_names[0] : "", ro->n_classes > 1 ? ", ..." : "");
            continue;
        }
        print_metrics(f, "results", &ro->per_result);
        print_metrics(f, "trials", &ro->per_trial);
        if (isfinite(ro->per_trial.itr_bits_per_minute))
            fprintf(f, "  ITR %.3f bits per trial, %.2f bits/min (a trial every %.2f s)\n",
                    ro->per_trial.itr_bits, ro->per_trial.itr_bits_per_minute,
                    ro->seconds_per_trial);
        const metrics *m = &ro->per_trial;
        fprintf(f, "  trials, rows true, columns predicted:");
        for (unsigned t = 0; m->confusion && t < m->n_classes; t++) {
            fprintf(f, "\n    %-12s", ro->class_names[t]);
            for (unsigned p = 0; p < m->n_classes; p++)
                fprintf(f, " %5u", m->confusion[t * m->n_classes + p]);
        }
        fputc('\n', f);
    }
    const latency *l = &r->stats.round_us;
    fprintf(f, "%.1f s replayed in %.3f s; round latency p50 %.0f us, p90 %.0f us, p99 %.0f us, "
            "max %.0f us\n", r->stats.stream_seconds, r->stats.wall_seconds,
            latency_quantile(l, 0.5), latency_quantile(l, 0.9), latency_quantile(l, 0.99),
            l->max_us);
}

static int write_to(const char *path, int (*fn)(FILE *, const replay *, const char *),
                    const replay *r, const char *graph)
{
    FILE *f = strcmp(path, "-") ? fopen(path, "w") : stdout;
    if (!f) {
        fprintf(stderr, "weft: cannot write %s: %s\n", path, strerror(errno));
        return -1;
    }
    int rc = fn(f, r, graph);
    if (f != stdout && fclose(f))
        rc = -1;
    if (rc)
        fprintf(stderr, "weft: could not write '%s'\n", path);
    return rc;
}

int cli_replay(int argc, char **argv)
{
    replay_args a;
    int rc = parse_args(argc, argv, &a);
    if (rc)
        return rc > 0 ? EXIT_OK : EXIT_USAGE;
    diag d = { 0 };
    replay r;
    rc = a.folds ? replay_folds(&r, a.graph, &a.opt, (unsigned)a.folds, &d)
                 : replay_run(&r, a.graph, &a.opt, &d);
    if (rc) {
        fprintf(stderr, "weft: %s\n", d.msg);
        int invalid = !r.have_stats;
        replay_free(&r);
        return invalid ? EXIT_INVALID : EXIT_FAILED;
    }
    int json_to_stdout = a.json && !strcmp(a.json, "-");
    if (!a.quiet)
        print_summary(json_to_stdout ? stderr : stdout, &r);
    if (a.json && write_to(a.json, report_json, &r, a.graph))
        rc = -1;
    if (a.report && write_to(a.report, report_html, &r, a.graph))
        rc = -1;
    replay_free(&r);
    return rc ? EXIT_FAILED : EXIT_OK;
}
