/* cli_run: `weft run GRAPH` -- run a graph until its sources end, a duration, or a signal. */
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "loop.h"
#include "control.h"
#include "control_commands.h"
#include "session_log.h"

static const char help[] =
    "usage: weft run GRAPH [--duration SECONDS] [--realtime] [--block FRAMES]\n"
    "                      [--session-log FILE] [--control SOCKET] [--quiet]\n"
    "                      [--set STAGE.PARAM=VALUE ...]\n"
    "\n"
    "Runs the graph: sources -> filters -> readouts (queried on schedule) -> sinks.\n"
    "  --duration S   stop after S seconds of stream time\n"
    "  --realtime     pace the sources to the wall clock, as a live amplifier would\n"
    "  --block N      frames per source request (default: 20 ms of each stream); any value\n"
    "                 gives the same results\n"
    "  --session-log FILE  write a JSON-lines record of the run: graph and plugin file\n"
    "                 hashes, versions, every parameter value, and at the end results,\n"
    "                 latency and errors\n"
    "  --control SOCKET  listen on this Unix socket (owner-only) for `weft status`,\n"
    "                 `weft swap` and `weft stop`; filters keep 2 s of input to warm up a\n"
    "                 replacement\n"
    "  --set STAGE.PARAM=VALUE  change one parameter as if the graph file said so (e.g.\n"
    "                 --set eeg.seed=12 for another synthetic session); repeatable\n"
    "  --quiet        no summary on stderr\n"
    "Without --realtime, bounded sources (recordings) and any run with --duration go as fast\n"
    "as possible; an unbounded source without --duration is paced to the clock.\n"
    "SIGINT or SIGTERM stops cleanly: sinks flush and close. Exit 0 done, 1 the run failed,\n"
    "2 usage error, 3 the graph is not valid.\n";

/* Set from the signal handler: the only state the process truly has one of. */
static volatile sig_atomic_t stop_requested;

static void on_signal(int sig)
{
    (void)sig;
    stop_requested = 1;
}

typedef struct run_args {
    const char *graph;
    const char *session_log;
    const char *control;
    double duration;
    unsigned long block;
    int realtime, quiet;
    cli_sets sets;
} run_args;

static int parse_args(int argc, char **argv, run_args *a)
{
    memset(a, 0, sizeof *a);
    for (int i = 1; i < argc; i++) {
        const char *arg = argv[i];
        if (!strcmp(arg, "--help") || !strcmp(arg, "-h")) {
            fputs(help, stdout);
            return 1;
        } else if (!strcmp(arg, "--realtime")) {
            a->realtime = 1;
        } else if (!strcmp(arg, "--quiet")) {
            a->quiet = 1;
        } else if (!strcmp(arg, "--session-log")) {
            if (i + 1 >= argc) {
                fprintf(stderr, "weft: --session-log needs a file name\n");
                return -1;
            }
            a->session_log = argv[++i];
        } else if (!strcmp(arg, "--set")) {
            if (cli_add_set(&a->sets, "--set", i + 1 < argc ? argv[++i] : NULL))
                return -1;
        } else if (!strcmp(arg, "--control")) {
            if (i + 1 >= argc) {
                fprintf(stderr, "weft: --control needs a socket path\n");
                return -1;
            }
            a->control = argv[++i];
        } else if (!strcmp(arg, "--duration")) {
            if (cli_number(arg, i + 1 < argc ? argv[++i] : NULL, &a->duration))
                return -1;
        } else if (!strcmp(arg, "--block")) {
            if (cli_count(arg, i + 1 < argc ? argv[++i] : NULL, &a->block))
                return -1;
            if (a->block > (1u << 20)) {
                fprintf(stderr, "weft: --block %lu is more than 1048576 frames\n", a->block);
                return -1;
            }
        } else if (arg[0] == '-') {
            fprintf(stderr, "weft run: unknown option '%s'\n\n%s", arg, help);
            return -1;
        } else if (!a->graph) {
            a->graph = arg;
        } else {
            fprintf(stderr, "weft run: one graph at a time ('%s' and '%s')\n", a->graph, arg);
            return -1;
        }
    }
    if (!a->graph) {
        fputs(help, stderr);
        return -1;
    }
    return cli_check_output("--session-log", a->session_log, &a->graph, 1);
}

static int has_unbounded_source(const pipeline *pl)
{
    for (unsigned i = 0; i < pl->n; i++)
        if (pl->nodes[i].role == WEFT_ROLE_SOURCE && !pl->nodes[i].out.bounded)
            return 1;
    return 0;
}

/* Seconds of input each filter keeps while a control socket is open, so a swapped-in filter
 * starts with settled state: several time constants of any EEG/EMG filter (common practice:
 * a 0.5 Hz high-pass settles within a few seconds; 2 s covers band-pass and notch stages). */
#define SWAP_WARMUP_SECONDS 2.0

typedef struct served {
    control *ctl;
    control_context cmd;
} served;

static int serve_control(void *ctx, diag *d)
{
    (void)d;
    served *s = ctx;
    return control_serve(s->ctl, control_command, &s->cmd);
}

static void print_summary(const loop_stats *st, int paced)
{
    fprintf(stderr,
            "weft: %llu results from %.3f s of stream in %.3f s (%s); %llu rounds, "
            "round latency p50 %.0f us, p99 %.0f us, max %.0f us",
            (unsigned long long)st->results, st->stream_seconds, st->wall_seconds,
            paced ? "paced" : "as fast as possible", (unsigned long long)st->rounds,
            latency_quantile(&st->round_us, 0.5), latency_quantile(&st->round_us, 0.99),
            st->round_us.max_us);
    if (st->dropped_triggers)
        fprintf(stderr, "; %llu marker triggers dropped",
                (unsigned long long)st->dropped_triggers);
    fprintf(stderr, "\n");
}

int cli_run(int argc, char **argv)
{
    run_args a;
    int rc = parse_args(argc, argv, &a);
    if (rc)
        return rc > 0 ? EXIT_OK : EXIT_USAGE;
    diag d = { 0 };
    graph g;
    pipeline pl;
    pipeline_options opt = { .block = (uint32_t)a.block,
                             .swap_warmup = a.control ? SWAP_WARMUP_SECONDS : 0 };
    if (graph_load(&g, a.graph, NULL, &d) || cli_apply_sets(&g, &a.sets, &d) ||
        pipeline_open(&pl, &g, &opt, &d)) {
        fprintf(stderr, "weft: %s\n", d.msg);
        graph_free(&g);
        return EXIT_INVALID;
    }
    struct sigaction sa;
    memset(&sa, 0, sizeof sa);
    sa.sa_handler = on_signal;
    sigaction(SIGINT, &sa, NULL);
    sigaction(SIGTERM, &sa, NULL);
    signal(SIGPIPE, SIG_IGN); /* a closed stdout is an I/O error for the sink, not a kill */

    loop_options lo = { .realtime = a.realtime || (a.duration <= 0 && has_unbounded_source(&pl)),
                        .duration = a.duration,
                        .stop = &stop_requested,
                        .service_every = 0.005 }; /* commands answered within ~5 ms */
    FILE *log = NULL;
    if (a.session_log && !(log = session_log_open(a.session_log, &pl, &d))) {
        fprintf(stderr, "weft: %s\n", d.msg);
        pipeline_close(&pl);
        graph_free(&g);
        return EXIT_FAILED;
    }
    loop_stats st;
    memset(&st, 0, sizeof st);
    served srv = { NULL, { &pl, &st, log } };
    loop_hooks hooks = { .ctx = &srv, .between_rounds = serve_control };
    if (a.control && !(srv.ctl = control_open(a.control, &d))) {
        fprintf(stderr, "weft: %s\n", d.msg);
        session_log_close(log, &st, d.msg);
        pipeline_close(&pl);
        graph_free(&g);
        return EXIT_FAILED;
    }
    rc = loop_run(&pl, &lo, srv.ctl ? &hooks : NULL, &st, &d);
    control_close(srv.ctl);
    pipeline_close(&pl); /* sinks flush and close here, also after a failure */
    session_log_close(log, &st, rc ? d.msg : NULL);
    if (rc)
        fprintf(stderr, "weft: %s\n", d.msg);
    if (!a.quiet)
        print_summary(&st, lo.realtime);
    loop_stats_free(&st);
    graph_free(&g);
    return rc ? EXIT_FAILED : EXIT_OK;
}
