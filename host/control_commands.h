/* control_commands: what the control socket's lines mean during `weft run`:
 *   status                          -> stream time, results, each stage's role and plugin
 *   stop                            -> stop cleanly after this round
 *   swap STAGE {PARAMS}             -> same plugin, some parameters changed
 *   swap STAGE plugin NAME {PARAMS} -> another plugin
 * Each reply is one JSON object with "ok": true or false (and "error"). */
#ifndef WEFT_CONTROL_COMMANDS_H
#define WEFT_CONTROL_COMMANDS_H

#include <stdio.h>

#include "loop.h"

typedef struct control_context {
    pipeline *pl;
    const loop_stats *st;
    FILE *session_log;          /* swaps are recorded here too; may be NULL */
} control_context;

/* A control_handler (see control.h); ctx is a control_context. */
int control_command(void *ctx, const char *line, char *reply, size_t reply_size);

#endif
