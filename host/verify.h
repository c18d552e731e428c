/* verify: the stage conformance checker behind `weft stages --verify` -- loads a plugin and
 * checks it against the stage ABI's contracts, each check in its own child process, and
 * prints a pass/fail table to paste into a pull request. */
#ifndef WEFT_VERIFY_H
#define WEFT_VERIFY_H

#include <stdio.h>

#include "verify_stream.h"

typedef struct verify_options {
    const char *params;             /* YAML map of parameter values; NULL: the defaults */
    weft_layout in[VERIFY_MAX_INPUTS];  /* input layouts; n_in 0: the defaults */
    uint32_t n_in;
    double window;                  /* readout windows, seconds; 0: 1 s */
    int values_any;                 /* readouts: results need only be finite */
    unsigned timeout;               /* seconds per check; 0: 30 */
} verify_options;

/* Check `file` and print the table to `out`. Returns the number of failed checks (0: the
 * plugin conforms), or -1 if the checker itself could not run. */
int verify_plugin(const char *file, const verify_options *opt, FILE *out);

/* Parse "4@250" or "8@250,2@1000" (channels@rate, comma-separated) into opt->in. Returns 0 or
 * -1 with a message in d. */
int verify_parse_inputs(const char *text, verify_options *opt, diag *d);

#endif
