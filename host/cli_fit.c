/* cli_fit: `weft fit GRAPH -o FITTED` -- fit a graph's fittable stages on the data of its own
 * (bounded) sources and write the fitted graph, with what it was fitted on in its header. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "cli.h"
#include "fit.h"
#include "graph_recording.h"
#include "graph_write.h"

static const char help[] =
    "usage: weft fit GRAPH -o FITTED [--data RECORDING] [--folds K] [--duration SECONDS]\n"
    "                [--block FRAMES]\n"
    "                [--shuffle SEED] [--set STAGE.PARAM=VALUE ...]\n"
    "                [--calibrate STAGE.PARAM=VALUE ...] [--quiet]\n"
    "\n"
    "Fits every fittable stage of GRAPH (spatial filters, readouts) on the labelled data of\n"
    "the graph's own sources, which must end by themselves (a recording, or a synthetic\n"
    "calibration run with `trials: N`) or be cut with --duration. Stages are fitted in graph\n"
    "order, each after a replay of the data through the stages fitted before it; the epochs\n"
    "are cut at the markers named in each readout's `fit: classes`. FITTED is GRAPH with the\n"
    "learned values filled in; `weft run FITTED` needs nothing else.\n"
    "  -o FITTED      where to write the fitted graph (required)\n"
    "  --data FILE    fit on this EDF+/BDF+ recording: each source stage plays the file's\n"
    "                 signals named after it (stage eeg: eeg.*), the first one its\n"
    "                 annotations as markers; FITTED keeps the graph's own sources\n"
    "  --folds K      chronological blocks for the accuracy estimate (default 5; 1: none).\n"
    "                 Block f is tested after fitting on blocks before it only.\n"
    "  --duration S   use the first S seconds of data\n"
    "  --block N      frames per source request (results do not depend on it)\n"
    "  --set STAGE.PARAM=VALUE        change a parameter of the graph (written into FITTED)\n"
    "  --calibrate STAGE.PARAM=VALUE  change a parameter only while fitting, e.g. point\n"
    "                 a synthetic source at a calibration session (--calibrate eeg.trials=40\n"
    "                 --calibrate eeg.seed=11); FITTED keeps the graph's own value\n"
    "  --shuffle SEED permute the classes over the trials before fitting: a check that the\n"
    "                 accuracy falls to chance; the fitted graph is marked and not for use\n"
    "  --quiet        no progress or summary on stderr\n"
    "Exit 0 done, 1 fitting failed, 2 usage error, 3 the graph is not valid.\n";

typedef struct fit_args {
    const char *graph, *out, *data;
    unsigned long folds, block, shuffle_seed;
    int shuffle;
    double duration;
    int quiet;
    cli_sets sets, calibrate;
} fit_args;

static int parse_args(int argc, char **argv, fit_args *a)
{
    memset(a, 0, sizeof *a);
    a->folds = FIT_DEFAULT_FOLDS;
    for (int i = 1; i < argc; i++) {
        const char *arg = argv[i];
        const char *next = i + 1 < argc ? argv[i + 1] : NULL;
        if (!strcmp(arg, "--help") || !strcmp(arg, "-h")) {
            fputs(help, stdout);
            return 1;
        } else if (!strcmp(arg, "--data")) {
            if (!next) {
                fprintf(stderr, "weft fit: --data needs a recording\n");
                return -1;
            }
            a->data = argv[++i];
        } else if (!strcmp(arg, "-o") || !strcmp(arg, "--output")) {
            if (!next) {
                fprintf(stderr, "weft fit: %s needs a file name\n", arg);
                return -1;
            }
            a->out = argv[++i];
        } else if (!strcmp(arg, "--folds")) {
            if (cli_count(arg, next, &a->folds))
                return -1;
            i++;
            if (a->folds > 100) {
                fprintf(stderr, "weft fit: --folds %lu is more than 100\n", a->folds);
                return -1;
            }
        } else if (!strcmp(arg, "--duration")) {
            if (cli_number(arg, next, &a->duration))
                return -1;
            i++;
        } else if (!strcmp(arg, "--block")) {
            if (cli_count(arg, next, &a->block))
                return -1;
            i++;
            if (a->block > (1u << 20)) {
                fprintf(stderr, "weft fit: --block %lu is more than 1048576 frames\n", a->block);
                return -1;
            }
        } else if (!strcmp(arg, "--shuffle")) {
            if (cli_count(arg, next, &a->shuffle_seed))
                return -1;
            i++;
            a->shuffle = 1;
        } else if (!strcmp(arg, "--quiet")) {
            a->quiet = 1;
        } else if (!strcmp(arg, "--set") || !strcmp(arg, "--calibrate")) {
            if (cli_add_set(arg[2] == 's' ? &a->sets : &a->calibrate, arg, next))
                return -1;
            i++;
        } else if (arg[0] == '-') {
            fprintf(stderr, "weft fit: unknown option '%s'\n\n%s", arg, help);
            return -1;
        } else if (!a->graph) {
            a->graph = arg;
        } else {
            fprintf(stderr, "weft fit: one graph at a time ('%s' and '%s')\n", a->graph, arg);
            return -1;
        }
    }
    if (!a->graph || !a->out) {
        fprintf(stderr, "weft fit: %s\n\n%s", a->graph ? "-o FITTED is required" : "no graph",
                help);
        return -1;
    }
    const char *inputs[] = { a->graph, a->data };
    return cli_check_output("-o", a->out, inputs, 2);
}

/* "stage 'intent' (logvar_lda): trials rest 20, grip 20; cross-validated accuracy ..." */
static size_t describe_readout(const pipeline *pl, const fit_readout_summary *rs, char *buf,
                               size_t size)
{
    const node *r = &pl->nodes[rs->stage];
    size_t len = (size_t)snprintf(buf, size, "stage '%s' (%s): trials", r->def->name,
                                  r->api->name);
    for (unsigned c = 0; c < rs->n_classes && len < size; c++)
        len += (size_t)snprintf(buf + len, size - len, "%s %s %u", c ? "," : "",
                                r->def->fit.classes[c].name, rs->trials[c]);
    if (len >= size)
        return len;
    if (rs->cv_tested)
        len += (size_t)snprintf(buf + len, size - len,
                                "; cross-validated accuracy %.3f (%u of %u trials, %u "
                                "chronological folds, each fitted on earlier trials only)",
                                (double)rs->cv_correct / rs->cv_tested, rs->cv_correct,
                                rs->cv_tested, rs->cv_folds);
    else
        len += (size_t)snprintf(buf + len, size - len, "; no cross-validated accuracy");
    return len;
}

static char *make_header(const fit_args *a, const pipeline *pl, const fit_summary *s)
{
    size_t size = 1024 + (a->data ? strlen(a->data) : 0) + (size_t)s->n_readouts * 512 + (size_t)a->calibrate.n * 160;
    char *h = malloc(size);
    if (!h)
        return NULL;
    char when[32];
    time_t now = time(NULL);
    struct tm tm;
    gmtime_r(&now, &tm);
    strftime(when, sizeof when, "%Y-%m-%dT%H:%M:%SZ", &tm);
    size_t len = (size_t)snprintf(
        h, size,
        "Fitted by `weft fit` from %s at %s.\n"
        "Data: %.3f s from %s%s, %u markers; content hash fnv1a64:%016llx\n"
        "(FNV-1a over every source's samples and marker labels; it tells data apart, it is\n"
        "not cryptographic).\n",
        a->graph, when, s->data_seconds, a->data ? "the recording " : "the graph's own sources",
        a->data ? a->data : "", s->n_markers, (unsigned long long)s->data_hash);
    for (unsigned i = 0; i < a->calibrate.n && len < size; i++)
        len += (size_t)snprintf(h + len, size - len, "%s%.120s%s",
                                i ? ", " : "Fitted with --calibrate ", a->calibrate.items[i],
                                i + 1 == a->calibrate.n ? " (not written below).\n" : "");
    if (a->shuffle && len < size)
        len += (size_t)snprintf(h + len, size - len,
                                "CLASSES SHUFFLED over the trials (--shuffle %lu): a chance-level "
                                "check; do not use this graph.\n", a->shuffle_seed);
    for (unsigned i = 0; i < s->n_readouts && len < size; i++) {
        len += describe_readout(pl, &s->readouts[i], h + len, size - len);
        if (len < size)
            len += (size_t)snprintf(h + len, size - len, "\n");
    }
    if (len < size)
        snprintf(h + len, size - len,
                 "Research use only; not a medical device. Learned values are the parameters "
                 "marked 'learned' in `weft stages`.");
    return h;
}

/* The written graph must open as a fitted graph, or fit has not done its job. */
static int check_written(const char *path, diag *d)
{
    graph g;
    pipeline pl;
    pipeline_options opt = { .idle_sinks = 1 }; /* a sink would create its files */
    if (graph_load(&g, path, NULL, d))
        return -1;
    int rc = pipeline_open(&pl, &g, &opt, d);
    if (rc == 0)
        pipeline_close(&pl);
    graph_free(&g);
    return rc;
}

int cli_fit(int argc, char **argv)
{
    fit_args a;
    int rc = parse_args(argc, argv, &a);
    if (rc)
        return rc > 0 ? EXIT_OK : EXIT_USAGE;
    diag d = { 0 };
    graph g, written;
    pipeline pl;
    /* Sinks never run while fitting; idle, they open no files. */
    pipeline_options opt = { .block = (uint32_t)a.block, .for_fit = 1, .idle_sinks = 1 };
    /* `written` is the graph as FITTED will say it: without the --calibrate changes and with
     * its own sources, not the recording of --data. */
    memset(&written, 0, sizeof written);
    if (graph_load(&g, a.graph, NULL, &d) || cli_apply_sets(&g, &a.sets, &d) ||
        graph_load(&written, a.graph, NULL, &d) || cli_apply_sets(&written, &a.sets, &d) ||
        cli_apply_sets(&g, &a.calibrate, &d) ||
        (a.data && graph_use_recording(&g, a.data, &d)) || pipeline_open(&pl, &g, &opt, &d)) {
        fprintf(stderr, "weft: %s\n", d.msg);
        graph_free(&g);
        graph_free(&written);
        return EXIT_INVALID;
    }
    fit_options fo = { .folds = (unsigned)a.folds, .duration = a.duration,
                       .log = a.quiet ? NULL : stderr, .shuffle = a.shuffle,
                       .shuffle_seed = a.shuffle_seed };
    fit_summary sum;
    rc = fit_pipeline(&pl, &fo, &sum, &d);
    char *header = rc ? NULL : make_header(&a, &pl, &sum);
    if (rc == 0 && !header)
        rc = diag_set(&d, "out of memory");
    if (rc == 0)
        rc = graph_write(&written, &pl, header, a.out, &d);
    diag reopen = { 0 };
    if (rc == 0 && check_written(a.out, &reopen))
        rc = diag_set(&d, "the fitted graph %s does not open: %s", a.out, reopen.msg);
    if (rc)
        fprintf(stderr, "weft: %s\n", d.msg);
    else if (!a.quiet) {
        char line[1024];
        for (unsigned i = 0; i < sum.n_readouts; i++) {
            describe_readout(&pl, &sum.readouts[i], line, sizeof line);
            fprintf(stderr, "weft fit: %s\n", line);
        }
        fprintf(stderr, "weft fit: %u stage%s fitted in %u passes over %.1f s of data; wrote "
                "%s\n", sum.n_fitted, sum.n_fitted == 1 ? "" : "s", sum.passes,
                sum.data_seconds, a.out);
    }
    free(header);
    fit_summary_free(&sum);
    pipeline_close(&pl);
    graph_free(&written);
    graph_free(&g);
    return rc ? EXIT_FAILED : EXIT_OK;
}
