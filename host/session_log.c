/* session_log: JSON-lines record of a run. */
#include "session_log.h"

#include <errno.h>
#include <string.h>
#include <time.h>

#include "json_write.h"

int file_fnv1a64(const char *path, uint64_t *out)
{
    FILE *f = fopen(path, "rb");
    if (!f)
        return -1;
    uint64_t h = 0xcbf29ce484222325ull;
    unsigned char buf[65536];
    size_t n;
    while ((n = fread(buf, 1, sizeof buf, f)) > 0)
        for (size_t i = 0; i < n; i++)
            h = (h ^ buf[i]) * 0x100000001b3ull;
    int failed = ferror(f);
    fclose(f);
    *out = h;
    return failed ? -1 : 0;
}

static void utc_now(char *buf, size_t size)
{
    time_t t = time(NULL);
    struct tm tm;
    gmtime_r(&t, &tm);
    strftime(buf, size, "%Y-%m-%dT%H:%M:%SZ", &tm);
}

static void hash_field(FILE *f, const char *key, const char *path)
{
    uint64_t h;
    fprintf(f, ",\"%s\":", key);
    if (file_fnv1a64(path, &h) == 0)
        fprintf(f, "\"%016llx\"", (unsigned long long)h);
    else
        fputs("null", f);
}

/* Parameter values are written with param_format, whose output (numbers, quoted strings,
 * true/false, nested lists) is valid JSON as well as YAML. */
static void stage_record(FILE *f, const node *n)
{
    fputs("{\"event\":\"stage\",\"name\":", f);
    json_write_string(f, n->def->name);
    fputs(",\"plugin\":", f);
    json_write_string(f, n->api->name);
    fputs(",\"version\":", f);
    json_write_string(f, n->api->version);
    fputs(",\"file\":", f);
    json_write_string(f, n->plug.file);
    hash_field(f, "file_fnv1a64", n->plug.file);
    fputs(",\"params\":{", f);
    char value[65536];
    for (uint32_t i = 0; i < n->params.count; i++) {
        const weft_param *p = &n->params.items[i];
        json_write_string(f, p->name);
        fputc(':', f);
        int unlearned = !p->given && (n->api->params[i].flags & WEFT_PARAM_LEARNED);
        /* A value too long for the buffer (a huge fitted matrix) is logged as null rather
         * than cut into invalid JSON; the fitted graph file holds it whole. */
        if (!unlearned && param_format(p, value, sizeof value) < sizeof value)
            fputs(value, f);
        else
            fputs("null", f);
        fputs(i + 1 < n->params.count ? "," : "", f);
    }
    fputs("}}\n", f);
}

FILE *session_log_open(const char *path, const pipeline *pl, diag *d)
{
    FILE *f = fopen(path, "w");
    if (!f) {
        diag_set(d, "cannot write the session log %s: %s", path, strerror(errno));
        return NULL;
    }
    char now[32];
    utc_now(now, sizeof now);
    fprintf(f, "{\"event\":\"start\",\"utc\":\"%s\",\"weft_abi\":\"%d.%d\",\"graph\":", now,
            WEFT_ABI_MAJOR, WEFT_ABI_MINOR);
    json_write_string(f, pl->g->path);
    hash_field(f, "graph_fnv1a64", pl->g->path);
    fputs(",\"name\":", f);
    json_write_string(f, pl->g->name);
    fputs("}\n", f);
    for (unsigned k = 0; k < pl->n; k++)
        stage_record(f, &pl->nodes[pl->order[k]]);
    fflush(f);
    return f;
}

void session_log_swap(FILE *f, const char *stage, const char *plugin, const char *params,
                      uint64_t index, double time, uint64_t warmup_frames)
{
    if (!f)
        return;
    char now[32];
    utc_now(now, sizeof now);
    fprintf(f, "{\"event\":\"swap\",\"utc\":\"%s\",\"stage\":", now);
    json_write_string(f, stage);
    fputs(",\"plugin\":", f);
    if (plugin)
        json_write_string(f, plugin);
    else
        fputs("null", f);
    fputs(",\"params\":", f);
    json_write_string(f, params ? params : "");
    fprintf(f, ",\"index\":%llu,\"time\":%.6f,\"warmup_frames\":%llu}\n",
            (unsigned long long)index, time, (unsigned long long)warmup_frames);
    fflush(f);
}

void session_log_close(FILE *f, const loop_stats *st, const char *error)
{
    if (!f)
        return;
    char now[32];
    utc_now(now, sizeof now);
    fprintf(f,
            "{\"event\":\"end\",\"utc\":\"%s\",\"status\":\"%s\",\"results\":%llu,"
            "\"rounds\":%llu,\"stream_seconds\":%.6f,\"wall_seconds\":%.6f,"
            "\"round_latency_us\":{\"p50\":%.1f,\"p99\":%.1f,\"max\":%.1f},"
            "\"dropped_triggers\":%llu,\"error\":",
            now, error ? "failed" : "ok", (unsigned long long)st->results,
            (unsigned long long)st->rounds, st->stream_seconds, st->wall_seconds,
            latency_quantile(&st->round_us, 0.5), latency_quantile(&st->round_us, 0.99),
            st->round_us.max_us, (unsigned long long)st->dropped_triggers);
    if (error)
        json_write_string(f, error);
    else
        fputs("null", f);
    fputs("}\n", f);
    fclose(f);
}
