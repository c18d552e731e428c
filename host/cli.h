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
int cli_stages(int argc, char **argv);
/* status, stop, swap: argv[0] is the command. */
int cli_control(int argc, char **argv);
int cli_fit(int argc, char **argv);

/* Parse a positive number / whole number option value; print a usage error if bad. */
int cli_number(const char *opt, const char *text, double *out);
int cli_count(const char *opt, const char *text, unsigned long *out);

#endif
