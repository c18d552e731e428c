/* cli_check: `weft check GRAPH` -- validate a graph and print it as the host resolved it. */
#include <stdio.h>
#include <string.h>

#include "cli.h"
#include "pipeline.h"

static const char help[] =
    "usage: weft check GRAPH [--set STAGE.PARAM=VALUE ...]\n"
    "\n"
    "Loads the graph, opens every plugin, checks parameters and initialises each stage as a\n"
    "run would (sources open their files; sinks create no output), then prints each stage with its plugin file and\n"
    "version, its output (channels, rate), each readout window in samples and the query\n"
    "schedule. Exit 0 if the graph is valid, 3 if not (the message names file:line:column).\n";

static void print_params(const node *n)
{
    char text[160];
    for (uint32_t i = 0; i < n->params.count; i++) {
        const weft_param *p = &n->params.items[i];
        if (!p->given && (n->api->params[i].flags & WEFT_PARAM_LEARNED)) {
            printf("    %-12s (learned by fit; not fitted yet)\n", p->name);
            continue;
        }
        size_t len = param_format(p, text, sizeof text);
        printf("    %-12s %s%s%s\n", p->name, text, len >= sizeof text ? "..." : "",
               p->given ? "" : "  (default)");
    }
}

static void print_output(const node *n)
{
    if (n->role == WEFT_ROLE_SINK) {
        printf("  output: none (sink)\n");
        return;
    }
    if (n->role == WEFT_ROLE_READOUT) {
        printf("  output: %u values [", n->out.channels);
        for (uint32_t c = 0; c < n->out.channels; c++)
            printf("%s%s", c ? ", " : "", n->out.labels ? n->out.labels[c] : "?");
        printf("]\n");
        return;
    }
    printf("  output: %u channels at %g Hz, blocks up to %u frames\n", n->out.channels,
           n->out.rate, n->out.max_frames);
}

static void print_readout(const node *n)
{
    for (unsigned k = 0; k < n->n_in; k++)
        printf("  input %s: window %g s = %u samples at %g Hz (ring keeps %u)\n",
               n->def->inputs[k].from, n->def->inputs[k].window, n->win_frames[k],
               n->in_layouts[k].rate, n->rings[k].capacity);
    const graph_query *q = &n->def->query;
    printf("  query:");
    if (q->every > 0)
        printf(" every %g s from %g s", q->every, (double)n->plan.next_k * q->every);
    if (q->n_on_marker) {
        printf("%s %g s after marker", q->every > 0 ? ";" : "", q->after);
        for (unsigned i = 0; i < q->n_on_marker; i++)
            printf("%s '%s'", i ? "," : "", q->on_marker[i]);
    }
    printf("\n");
    if (n->def->has_fit) {
        printf("  fit: epochs end %g s after marker;", n->def->fit.after);
        for (unsigned c = 0; c < n->def->fit.n_classes; c++) {
            const graph_fit_class *fc = &n->def->fit.classes[c];
            printf(" %s <-", fc->name);
            for (unsigned l = 0; l < fc->n_labels; l++)
                printf(" '%s'", fc->labels[l]);
            printf("%s", c + 1 < n->def->fit.n_classes ? ";" : "\n");
        }
    }
}

static void print_pipeline(const pipeline *pl)
{
    const graph *g = pl->g;
    printf("graph '%s' (%s): %u stages, history %g s\n", g->name, g->path, g->n_stages,
           g->history);
    for (unsigned k = 0; k < pl->n; k++) {
        const node *n = &pl->nodes[pl->order[k]];
        printf("\n%s: %s %s %s (%s)\n", n->def->name, role_name(n->role), n->api->name,
               n->api->version, n->plug.file);
        if (n->n_in && n->role != WEFT_ROLE_READOUT) {
            printf("  input:");
            for (unsigned i = 0; i < n->n_in; i++)
                printf(" %s", n->def->inputs[i].from);
            printf("\n");
        }
        print_output(n);
        if (n->role == WEFT_ROLE_READOUT)
            print_readout(n);
        if (n->params.count) {
            printf("  params:\n");
            print_params(n);
        }
    }
}

int cli_check(int argc, char **argv)
{
    const char *path = NULL;
    cli_sets sets = { 0 };
    for (int i = 1; i < argc; i++) {
        if (!strcmp(argv[i], "--help") || !strcmp(argv[i], "-h")) {
            fputs(help, stdout);
            return EXIT_OK;
        } else if (!strcmp(argv[i], "--set")) {
            if (cli_add_set(&sets, "--set", i + 1 < argc ? argv[++i] : NULL))
                return EXIT_USAGE;
        } else if (argv[i][0] == '-' || path) {
            fputs(help, stderr);
            return EXIT_USAGE;
        } else {
            path = argv[i];
        }
    }
    if (!path) {
        fputs(help, stderr);
        return EXIT_USAGE;
    }
    diag d = { 0 };
    graph g;
    pipeline pl;
    pipeline_options opt = { .for_fit = 1, .check_only = 1 };
    if (graph_load(&g, path, NULL, &d) || cli_apply_sets(&g, &sets, &d) ||
        pipeline_open(&pl, &g, &opt, &d)) {
        fprintf(stderr, "weft: %s\n", d.msg);
        graph_free(&g);
        return EXIT_INVALID;
    }
    print_pipeline(&pl);
    printf("\nok: %s is valid\n", path);
    pipeline_close(&pl);
    graph_free(&g);
    return EXIT_OK;
}
