/* control_commands: status, stop and swap over the control socket. */
#include "control_commands.h"

#include <stdarg.h>
#include <string.h>

#include "session_log.h"
#include "swap.h"

static void put(char *reply, size_t size, const char *fmt, ...)
{
    size_t len = strlen(reply);
    if (len >= size)
        return;
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(reply + len, size - len, fmt, ap);
    va_end(ap);
}

/* Copy s as JSON string content (without quotes). */
static void put_json_text(char *reply, size_t size, const char *s)
{
    for (; *s; s++) {
        if (*s == '"' || *s == '\\')
            put(reply, size, "\\%c", *s);
        else if ((unsigned char)*s < 0x20)
            put(reply, size, "\\u%04x", (unsigned char)*s);
        else
            put(reply, size, "%c", *s);
    }
}

static int fail(char *reply, size_t size, const char *why)
{
    reply[0] = 0;
    put(reply, size, "{\"ok\":false,\"error\":\"");
    put_json_text(reply, size, why);
    put(reply, size, "\"}");
    return 0;
}

static int status(control_context *c, char *reply, size_t size)
{
    const loop_stats *st = c->st;
    double stream = 0;
    for (unsigned i = 0; i < c->pl->n; i++) {
        const node *n = &c->pl->nodes[i];
        if (n->role == WEFT_ROLE_SOURCE && n->out.rate > 0 &&
            (double)n->produced / n->out.rate > stream)
            stream = (double)n->produced / n->out.rate;
    }
    put(reply, size, "{\"ok\":true,\"stream_seconds\":%.3f,\"results\":%llu,\"rounds\":%llu,"
                     "\"stages\":[", stream, (unsigned long long)st->results,
        (unsigned long long)st->rounds);
    for (unsigned k = 0; k < c->pl->n; k++) {
        const node *n = &c->pl->nodes[c->pl->order[k]];
        put(reply, size, "%s{\"name\":\"", k ? "," : "");
        put_json_text(reply, size, n->def->name);
        put(reply, size, "\",\"role\":\"%s\",\"plugin\":\"", role_name(n->role));
        put_json_text(reply, size, n->api->name);
        put(reply, size, "\",\"version\":\"");
        put_json_text(reply, size, n->api->version);
        put(reply, size, "\"}");
    }
    put(reply, size, "]}");
    return 0;
}

/* swap STAGE [plugin NAME] [{PARAMS}] */
static int swap(control_context *c, const char *args, char *reply, size_t size)
{
    char stage[128] = "", plugin[128] = "";
    int used = 0;
    if (sscanf(args, " %127s%n", stage, &used) != 1)
        return fail(reply, size, "usage: swap STAGE [plugin NAME] [{PARAM: VALUE, ...}]");
    const char *rest = args + used;
    while (*rest == ' ')
        rest++;
    if (strncmp(rest, "plugin ", 7) == 0) {
        used = 0;
        if (sscanf(rest + 7, " %127s%n", plugin, &used) != 1)
            return fail(reply, size, "swap: `plugin` needs a plugin name");
        rest += 7 + used;
    }
    swap_report rep;
    diag d = { 0 };
    if (swap_stage(c->pl, stage, plugin[0] ? plugin : NULL, rest, &rep, &d))
        return fail(reply, size, d.msg);
    fprintf(stderr, "weft: swapped stage '%s'%s%s at sample %llu (%.3f s), warmed up on %llu "
            "frames\n", stage, plugin[0] ? " to plugin " : "", plugin,
            (unsigned long long)rep.index, rep.time, (unsigned long long)rep.warmup_frames);
    session_log_swap(c->session_log, stage, plugin[0] ? plugin : NULL, rest, rep.index,
                     rep.time, rep.warmup_frames);
    put(reply, size, "{\"ok\":true,\"stage\":\"");
    put_json_text(reply, size, stage);
    put(reply, size, "\",\"index\":%llu,\"time\":%.6f,\"warmup_frames\":%llu}",
        (unsigned long long)rep.index, rep.time, (unsigned long long)rep.warmup_frames);
    return 0;
}

int control_command(void *ctx, const char *line, char *reply, size_t size)
{
    control_context *c = ctx;
    reply[0] = 0;
    while (*line == ' ')
        line++;
    if (strcmp(line, "status") == 0)
        return status(c, reply, size);
    if (strcmp(line, "stop") == 0) {
        put(reply, size, "{\"ok\":true,\"stopping\":true}");
        return 1;
    }
    if (strncmp(line, "swap ", 5) == 0)
        return swap(c, line + 5, reply, size);
    return fail(reply, size, "unknown command; known: status, stop, swap STAGE [plugin NAME] "
                             "[{PARAM: VALUE, ...}]");
}
