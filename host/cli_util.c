/* cli_util: option values shared by the subcommands. */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include "cli.h"
#include "graph_set.h"

int cli_number(const char *opt, const char *text, double *out)
{
    char *end = NULL;
    errno = 0;
    double v = text ? strtod(text, &end) : 0;
    if (!text || !*text || *end || errno || !isfinite(v) || v <= 0) {
        fprintf(stderr, "weft: %s needs a positive number, not '%s'\n", opt,
                text ? text : "(nothing)");
        return -1;
    }
    *out = v;
    return 0;
}

int cli_count(const char *opt, const char *text, unsigned long *out)
{
    char *end = NULL;
    errno = 0;
    unsigned long v = text ? strtoul(text, &end, 10) : 0;
    if (!text || !*text || *end || errno || v == 0 || text[0] == '-') {
        fprintf(stderr, "weft: %s needs a whole number above 0, not '%s'\n", opt,
                text ? text : "(nothing)");
        return -1;
    }
    *out = v;
    return 0;
}

int cli_add_set(cli_sets *s, const char *option, const char *value)
{
    if (!value) {
        fprintf(stderr, "weft: %s needs STAGE.PARAM=VALUE\n", option);
        return -1;
    }
    if (s->n == CLI_MAX_SETS) {
        fprintf(stderr, "weft: at most %d %s options\n", CLI_MAX_SETS, option);
        return -1;
    }
    s->option[s->n] = option;
    s->items[s->n++] = value;
    return 0;
}

int cli_apply_sets(graph *g, const cli_sets *s, diag *d)
{
    for (unsigned i = 0; i < s->n; i++)
        if (graph_set_param(g, s->option[i], s->items[i], d))
            return -1;
    return 0;
}
