/* cli: the `weft` subcommands. Each parses its own arguments and calls the host modules. */
#ifndef WEFT_CLI_H
#define WEFT_CLI_H

/* Exit codes, documented in docs/cli.md. */
enum {
    EXIT_OK = 0,
    EXIT_FAILED = 1,        /* the run stopped on an error (a stage failed, I/O) */
    EXIT_USAGE = 2,         /* wrong command-line arguments */
    EXIT_INVALID = 3        /* the graph (or a plugin) is not valid */
};

int cli_check(int argc, char **argv);
int cli_run(int argc, char **argv);
int cli_replay(int argc, char **argv);
int cli_stages(int argc, char **argv);
int cli_response(int argc, char **argv);
/* status, stop, swap: argv[0] is the command. */
int cli_control(int argc, char **argv);
int cli_fit(int argc, char **argv);

/* --set STAGE.PARAM=VALUE, collected from the command line and applied after loading. */
#define CLI_MAX_SETS 64
typedef struct cli_sets {
    const char *option[CLI_MAX_SETS];   /* "--set" or "--calibrate", for messages */
    const char *items[CLI_MAX_SETS];
    unsigned n;
} cli_sets;

/* Record one --set value; prints a usage error and returns -1 if there is none or too many. */
int cli_add_set(cli_sets *s, const char *option, const char *value);

struct graph;
struct diag;
/* Apply every recorded --set to a loaded graph. */
int cli_apply_sets(struct graph *g, const cli_sets *s, struct diag *d);

/* Parse a positive number / whole number option value; print a usage error if bad. */
int cli_number(const char *opt, const char *text, double *out);
int cli_count(const char *opt, const char *text, unsigned long *out);

/* Check, before any work, that OPT's file OUT can be written without destroying an input:
 * its folder must exist, it must not be a folder, and it must not be the same file as any of
 * the n INPUTS (NULL entries are skipped). Prints a usage error and returns -1 if not.
 * "-" (standard output) always passes. */
int cli_check_output(const char *opt, const char *out, const char *const *inputs, unsigned n);

#endif
