/* cli_util: option values shared by the subcommands. */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include "cli.h"

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
