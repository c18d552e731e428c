/* weft: the command-line entry point, a thin dispatcher over the subcommands. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <weft/stage.h>

#include "cli.h"

static const char usage[] =
    "usage: weft COMMAND [ARGS]\n"
    "\n"
    "Runs graphs of biosignal processing stages (plugins) on live or recorded streams.\n"
    "\n"
    "commands:\n"
    "  check GRAPH        validate a graph file and print it resolved\n"
    "  run GRAPH          run a graph (see weft run --help)\n"
    "  replay GRAPH --data REC  run a graph on a recording and score it against its cues\n"
    "  response GRAPH STAGE  frequency response of a filter stage or chain (table, SVG)\n"
    "  stages [NAME]      list the plugins found and their parameters\n"
    "  status SOCKET      ask a running graph (run --control SOCKET) how it is doing\n"
    "  swap SOCKET STAGE  replace a stage of a running graph, losing no sample\n"
    "  stop SOCKET        stop a running graph cleanly\n"
    "  version            print the weft and stage ABI versions\n"
    "\n"
    "Each command takes --help. Exit codes: 0 done, 1 the run failed, 2 usage error,\n"
    "3 the graph or a plugin is not valid.\n"
    "Research use only: weft is not a medical device.\n";

int main(int argc, char **argv)
{
    /* The run loop must not wait on a thread pool: OpenBLAS (loaded by spatial plugins) reads
     * this when it loads. A value the user set deliberately is kept. */
    setenv("OPENBLAS_NUM_THREADS", "1", 0);
    if (argc < 2) {
        fputs(usage, stderr);
        return EXIT_USAGE;
    }
    const char *cmd = argv[1];
    if (!strcmp(cmd, "--help") || !strcmp(cmd, "-h") || !strcmp(cmd, "help")) {
        fputs(usage, stdout);
        return EXIT_OK;
    }
    if (!strcmp(cmd, "version") || !strcmp(cmd, "--version")) {
        printf("weft %s (stage ABI %d.%d)\n", WEFT_VERSION, WEFT_ABI_MAJOR, WEFT_ABI_MINOR);
        return EXIT_OK;
    }
    if (!strcmp(cmd, "check"))
        return cli_check(argc - 1, argv + 1);
    if (!strcmp(cmd, "run"))
        return cli_run(argc - 1, argv + 1);
    if (!strcmp(cmd, "response"))
        return cli_response(argc - 1, argv + 1);
    if (!strcmp(cmd, "fit"))
        return cli_fit(argc - 1, argv + 1);
    if (!strcmp(cmd, "replay"))
        return cli_replay(argc - 1, argv + 1);
    if (!strcmp(cmd, "stages"))
        return cli_stages(argc - 1, argv + 1);
    if (!strcmp(cmd, "status") || !strcmp(cmd, "stop") || !strcmp(cmd, "swap"))
        return cli_control(argc - 1, argv + 1);
    fprintf(stderr, "weft: unknown command '%s'\n\n%s", cmd, usage);
    return EXIT_USAGE;
}
