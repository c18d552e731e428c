/* cli_util: option values shared by the subcommands. */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

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

/* The folder part of PATH ("." when it has none), written into BUF. */
static const char *folder_of(const char *path, char *buf, size_t size)
{
    const char *slash = strrchr(path, '/');
    if (!slash)
        return ".";
    size_t len = slash == path ? 1 : (size_t)(slash - path);
    if (len >= size)
        return NULL;
    memcpy(buf, path, len);
    buf[len] = '\0';
    return buf;
}

int cli_check_output(const char *opt, const char *out, const char *const *inputs, unsigned n)
{
    if (!out || !strcmp(out, "-"))
        return 0;
    struct stat so, si;
    char buf[4096];
    const char *folder = folder_of(out, buf, sizeof buf);
    if (!folder || stat(folder, &si) || !S_ISDIR(si.st_mode)) {
        fprintf(stderr, "weft: %s %s: the folder '%s' does not exist; create it first\n", opt,
                out, folder ? folder : out);
        return -1;
    }
    if (stat(out, &so))
        return 0; /* a new file */
    if (S_ISDIR(so.st_mode)) {
        fprintf(stderr, "weft: %s %s: that is a folder; give a file name\n", opt, out);
        return -1;
    }
    for (unsigned i = 0; i < n; i++)
        if (inputs[i] && !stat(inputs[i], &si) && si.st_dev == so.st_dev &&
            si.st_ino == so.st_ino) {
            fprintf(stderr, "weft: %s %s is the input '%s'; writing it would destroy it, so "
                    "choose another file\n", opt, out, inputs[i]);
            return -1;
        }
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
