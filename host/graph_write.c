/* graph_write: emitting a graph file from the model, parameters as written plus learned ones. */
#define _XOPEN_SOURCE 700 /* realpath(): the folders of the graph and of its fitted copy */
#include "graph_write.h"

#include <errno.h>
#include <limits.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

typedef struct writer {
    FILE *f;
    const graph *g;
    const pipeline *pl;
    char *graph_dir_abs;        /* realpath of the graph's folder */
    int moved;                  /* output in another folder than the graph */
} writer;

/* Shortest text that reads back as the same double (as param_format does). */
static void put_number(FILE *f, double v)
{
    char tmp[40];
    snprintf(tmp, sizeof tmp, "%.15g", v);
    if (strtod(tmp, NULL) != v)
        snprintf(tmp, sizeof tmp, "%.17g", v);
    fputs(tmp, f);
}

/* Plain scalars that YAML would read as something else. "-0.8" stays plain; "- x" and "?"
 * would start a sequence item or a complex key. */
static int needs_quotes(const char *s)
{
    if (!*s || s[0] == ' ' || s[strlen(s) - 1] == ' ')
        return 1;
    if ((s[0] == '-' || s[0] == '?') && (s[1] == ' ' || s[1] == 0))
        return 1;
    return strpbrk(s, ":#{}[],&*!|>'\"%@`\n\t\\") != NULL;
}

static void put_scalar(FILE *f, const char *s, int quoted)
{
    if (!quoted && !needs_quotes(s)) {
        fputs(s, f);
        return;
    }
    fputc('"', f);
    for (; *s; s++) {
        if (*s == '"' || *s == '\\')
            fprintf(f, "\\%c", *s);
        else if (*s == '\n')
            fputs("\\n", f);
        else if (*s == '\t')
            fputs("\\t", f);
        else
            fputc(*s, f);
    }
    fputc('"', f);
}

/* Any value as written in the file, in flow style. */
static void put_node(FILE *f, const ynode *n)
{
    switch (n->kind) {
    case YNODE_SCALAR: put_scalar(f, n->text, n->quoted); break;
    case YNODE_SEQ:
        fputc('[', f);
        for (unsigned i = 0; i < n->n; i++) {
            fputs(i ? ", " : "", f);
            put_node(f, n->items[i]);
        }
        fputc(']', f);
        break;
    case YNODE_MAP:
        fputs("{ ", f);
        for (unsigned i = 0; i < n->n; i++) {
            fputs(i ? ", " : "", f);
            put_scalar(f, n->keys[i]->text, n->keys[i]->quoted);
            fputs(": ", f);
            put_node(f, n->items[i]);
        }
        fputs(n->n ? " }" : "}", f);
        break;
    }
}

static void put_labels(FILE *f, char *const *labels, unsigned n)
{
    fputc('[', f);
    for (unsigned i = 0; i < n; i++) {
        fputs(i ? ", " : "", f);
        put_scalar(f, labels[i], 0);
    }
    fputc(']', f);
}

static int put_param_text(FILE *f, const weft_param *p)
{
    size_t len = param_format(p, NULL, 0);
    char *text = malloc(len + 1);
    if (!text)
        return -1;
    param_format(p, text, len + 1);
    fputs(text, f);
    free(text);
    return 0;
}

/* A learned matrix one row per line, so a fitted graph can be read and diffed. */
static int put_learned(FILE *f, const weft_param *p)
{
    fprintf(f, "      %s:", p->name);
    if (p->type != WEFT_PARAM_MATRIX || p->rows == 0) {
        fputc(' ', f);
        int rc = put_param_text(f, p);
        fputc('\n', f);
        return rc;
    }
    fputc('\n', f);
    for (uint32_t r = 0; r < p->rows; r++) {
        weft_param row = { .name = p->name, .type = WEFT_PARAM_NUMBERS, .rows = 1,
                           .cols = p->cols, .values = p->values + (size_t)r * p->cols };
        fputs("        - ", f);
        if (put_param_text(f, &row))
            return -1;
        fputc('\n', f);
    }
    return 0;
}

static int learned_and_given(const node *n, uint32_t i)
{
    return n && (n->api->params[i].flags & WEFT_PARAM_LEARNED) && n->params.items[i].given;
}

/* The stage's parameters as written in g, then what its namesake in pl learned (n may be
 * NULL: a stage the fitting pipeline did not have, such as a recorder left out of a replay). */
static int put_params(writer *w, const graph_stage *s, const node *n)
{
    const ynode *given = s->params;
    int any = given && given->n;
    for (uint32_t i = 0; n && i < n->params.count; i++)
        any |= learned_and_given(n, i);
    if (!any)
        return 0;
    fputs("    params:\n", w->f);
    for (unsigned i = 0; given && i < given->n; i++) {
        const char *key = given->keys[i]->text;
        int relearned = 0;
        for (uint32_t k = 0; n && k < n->params.count; k++)
            relearned |= learned_and_given(n, k) && !strcmp(n->params.items[k].name, key);
        if (relearned)
            continue;
        fputs("      ", w->f);
        put_scalar(w->f, key, given->keys[i]->quoted);
        fputs(": ", w->f);
        put_node(w->f, given->items[i]);
        fputc('\n', w->f);
    }
    for (uint32_t i = 0; n && i < n->params.count; i++)
        if (learned_and_given(n, i) && put_learned(w->f, &n->params.items[i]))
            return -1;
    return 0;
}

static void put_inputs(writer *w, const graph_stage *s)
{
    if (!s->n_inputs)
        return;
    fputs("    input: [", w->f);
    for (unsigned i = 0; i < s->n_inputs; i++) {
        fputs(i ? ", " : "", w->f);
        if (s->inputs[i].window > 0) {
            fprintf(w->f, "{ from: %s, window: ", s->inputs[i].from);
            put_number(w->f, s->inputs[i].window);
            fputs(" }", w->f);
        } else {
            fputs(s->inputs[i].from, w->f);
        }
    }
    fputs("]\n", w->f);
}

static void put_query(writer *w, const graph_stage *s)
{
    if (!s->has_query)
        return;
    const graph_query *q = &s->query;
    const char *sep = "";
    fputs("    query: { ", w->f);
    if (q->every > 0) {
        fputs("every: ", w->f);
        put_number(w->f, q->every);
        sep = ", ";
    }
    if (q->n_on_marker) {
        fprintf(w->f, "%son_marker: ", sep);
        put_labels(w->f, q->on_marker, q->n_on_marker);
        fputs(", after: ", w->f);
        put_number(w->f, q->after);
    }
    fputs(" }\n", w->f);
}

static void put_fit(writer *w, const graph_stage *s)
{
    if (!s->has_fit)
        return;
    const graph_fit *f = &s->fit;
    fputs("    fit:\n      classes: { ", w->f);
    for (unsigned c = 0; c < f->n_classes; c++) {
        fputs(c ? ", " : "", w->f);
        put_scalar(w->f, f->classes[c].name, 0);
        fputs(": ", w->f);
        put_labels(w->f, f->classes[c].labels, f->classes[c].n_labels);
    }
    fputs(" }\n      after: ", w->f);
    put_number(w->f, f->after);
    fputc('\n', w->f);
}

static int put_plugin(writer *w, const graph_stage *s)
{
    if (!s->path) {
        fputs("    plugin: ", w->f);
        put_scalar(w->f, s->plugin, 0);
        fputc('\n', w->f);
        return 0;
    }
    fputs("    path: ", w->f);
    if (s->path[0] == '/' || !w->moved) {
        put_scalar(w->f, s->path, 0);
    } else {
        size_t len = strlen(w->graph_dir_abs) + strlen(s->path) + 2;
        char *abs = malloc(len);
        if (!abs)
            return -1;
        snprintf(abs, len, "%s/%s", w->graph_dir_abs, s->path);
        put_scalar(w->f, abs, 0);
        free(abs);
    }
    fputc('\n', w->f);
    return 0;
}

static int put_graph(writer *w, const char *header)
{
    const graph *g = w->g;
    for (const char *line = header; line && *line;) {
        const char *nl = strchr(line, '\n');
        size_t len = nl ? (size_t)(nl - line) : strlen(line);
        fprintf(w->f, "# %.*s\n", (int)len, line);
        line = nl ? nl + 1 : NULL;
    }
    fprintf(w->f, "weft: %d\nname: ", GRAPH_FORMAT_VERSION);
    put_scalar(w->f, g->name ? g->name : "fitted", 0);
    fputs("\nhistory: ", w->f);
    put_number(w->f, g->history);
    fputs("\nstages:\n", w->f);
    for (unsigned i = 0; i < g->n_stages; i++) {
        const graph_stage *s = &g->stages[i];
        fprintf(w->f, "  %s:\n", s->name);
        if (put_plugin(w, s))
            return -1;
        put_inputs(w, s);
        put_query(w, s);
        put_fit(w, s);
        int k = graph_find(w->pl->g, s->name);
        if (put_params(w, s, k >= 0 ? &w->pl->nodes[k] : NULL))
            return -1;
    }
    return 0;
}

/* The folder of `path`, resolved, or NULL. */
static char *folder_of(const char *path)
{
    const char *slash = strrchr(path, '/');
    char *dir = slash ? strndup(path, (size_t)(slash - path + (slash == path))) : strdup(".");
    char *abs = dir ? realpath(dir, NULL) : NULL;
    free(dir);
    return abs;
}

int graph_write(const graph *g, const pipeline *pl, const char *header, const char *path,
                diag *d)
{
    writer w = { .g = g, .pl = pl, .graph_dir_abs = realpath(g->dir, NULL) };
    char *out_dir = folder_of(path);
    if (!w.graph_dir_abs || !out_dir) {
        free(w.graph_dir_abs);
        free(out_dir);
        return diag_set(d, "%s: cannot resolve the folder to write into: %s", path,
                        strerror(errno));
    }
    w.moved = strcmp(w.graph_dir_abs, out_dir) != 0;
    free(out_dir);
    size_t len = strlen(path) + 16;
    char *tmp = malloc(len);
    if (!tmp) {
        free(w.graph_dir_abs);
        return diag_set(d, "out of memory");
    }
    snprintf(tmp, len, "%s.tmp%ld", path, (long)getpid());
    w.f = fopen(tmp, "w");
    int rc = -1;
    if (!w.f) {
        diag_set(d, "%s: cannot write: %s", tmp, strerror(errno));
    } else {
        rc = put_graph(&w, header);
        if (ferror(w.f))
            rc = -1;
        if (fclose(w.f) != 0)
            rc = -1;
        if (rc)
            diag_set(d, "%s: writing failed: %s", tmp, strerror(errno));
        else if (rename(tmp, path) != 0)
            rc = diag_set(d, "%s: cannot rename to %s: %s", tmp, path, strerror(errno));
        if (rc)
            remove(tmp);
    }
    free(tmp);
    free(w.graph_dir_abs);
    return rc;
}
