/* control: the run's control socket -- a Unix domain socket, owner-only, through which a study
 * program or a person asks for status, swaps a stage or stops the run. One command per line,
 * one reply line per command. Served between rounds without ever blocking the loop. */
#ifndef WEFT_CONTROL_H
#define WEFT_CONTROL_H

#include <stddef.h>

#include "diag.h"

typedef struct control control;

/* Handle one command line; write one reply line (no newline) into reply. Return 0 to go on,
 * 1 to stop the run after replying. */
typedef int (*control_handler)(void *ctx, const char *line, char *reply, size_t reply_size);

/* Listen on `path` (mode 0600). A stale socket left by a killed run is replaced; any other
 * existing file is an error. */
control *control_open(const char *path, diag *d);

/* Accept waiting clients and run every complete command line they sent. Never blocks.
 * Returns 1 if a handler asked to stop, else 0. */
int control_serve(control *c, control_handler handle, void *ctx);

void control_close(control *c);

/* Client side: send one line to the socket at `path`, wait up to timeout_s for the reply
 * line. Returns 0 with the reply, or -1 with a reason in reply. */
int control_request(const char *path, const char *line, char *reply, size_t reply_size,
                    double timeout_s);

#endif
