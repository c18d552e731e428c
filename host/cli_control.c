/* cli_control: `weft status`, `weft stop` and `weft swap` -- clients of a running graph's
 * control socket (`weft run --control SOCKET`). */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "control.h"

#define REQUEST_TIMEOUT_S 10.0

static const char help[] =
    "usage: weft status SOCKET\n"
    "       weft stop SOCKET\n"
    "       weft swap SOCKET STAGE [--plugin NAME] [PARAM=VALUE ...]\n"
    "\n"
    "Talk to a graph started with `weft run GRAPH --control SOCKET`.\n"
    "  status  prints stream time, results and the stages as JSON\n"
    "  stop    stops the run cleanly (sinks flush and close)\n"
    "  swap    replaces a filter or readout between two blocks, losing no sample: with\n"
    "          PARAM=VALUE pairs (values as in a graph file, e.g. freq=50 or\n"
    "          'weights=[[1, 0], [0, 1]]') the same plugin with those values changed;\n"
    "          with --plugin another plugin (starting from its defaults). A filter's\n"
    "          replacement is warmed up on the last 2 s of its input first.\n"
    "Exit 0 if the run accepted the command, 1 if it refused (the reply says why), 2 for\n"
    "usage errors.\n";

static int send_line(const char *socket, const char *line)
{
    char reply[65536];
    if (control_request(socket, line, reply, sizeof reply, REQUEST_TIMEOUT_S)) {
        fprintf(stderr, "weft: %s\n", reply);
        return EXIT_FAILED;
    }
    printf("%s\n", reply);
    return strncmp(reply, "{\"ok\":true", 10) == 0 ? EXIT_OK : EXIT_FAILED;
}

/* "swap STAGE [plugin NAME] {k: v, ...}" from the command-line words. */
static int build_swap(int argc, char **argv, char *line, size_t size)
{
    const char *plugin = NULL;
    size_t len = (size_t)snprintf(line, size, "swap %s", argv[2]);
    char params[60000] = "";
    size_t plen = 0;
    for (int i = 3; i < argc; i++) {
        if (!strcmp(argv[i], "--plugin") && i + 1 < argc) {
            plugin = argv[++i];
            continue;
        }
        const char *eq = strchr(argv[i], '=');
        if (!eq || eq == argv[i]) {
            fprintf(stderr, "weft swap: '%s' is not PARAM=VALUE\n", argv[i]);
            return -1;
        }
        plen += (size_t)snprintf(params + plen, plen < sizeof params ? sizeof params - plen : 0,
                                 "%s%.*s: %s", plen ? ", " : "", (int)(eq - argv[i]), argv[i],
                                 eq + 1);
    }
    if (plugin)
        len += (size_t)snprintf(line + len, len < size ? size - len : 0, " plugin %s", plugin);
    len += (size_t)snprintf(line + len, len < size ? size - len : 0, " {%s}", params);
    if (len >= size || plen >= sizeof params) {
        fprintf(stderr, "weft swap: the parameters are longer than a command line allows\n");
        return -1;
    }
    return 0;
}

int cli_control(int argc, char **argv)
{
    const char *cmd = argv[0];
    if (argc >= 2 && (!strcmp(argv[1], "--help") || !strcmp(argv[1], "-h"))) {
        fputs(help, stdout);
        return EXIT_OK;
    }
    if (argc < 2 || (strcmp(cmd, "swap") == 0 ? argc < 3 : argc != 2)) {
        fputs(help, stderr);
        return EXIT_USAGE;
    }
    if (strcmp(cmd, "swap") != 0)
        return send_line(argv[1], cmd);
    char line[65536];
    if (build_swap(argc, argv, line, sizeof line))
        return EXIT_USAGE;
    return send_line(argv[1], line);
}
