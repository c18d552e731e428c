/* yaml_doc: builds a marked node tree from libyaml's event stream. */
#include "yaml_doc.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <errno.h>
#include <sys/stat.h>
#include <yaml.h>

/* Nesting deeper than this is no graph file; refusing it keeps hostile input from exhausting
 * the stack through recursion. */
#define MAX_DEPTH 64

typedef struct parse_ctx {
    yaml_parser_t parser;
    const char *path;
    diag *d;
} parse_ctx;

static src_mark mark_of(const yaml_mark_t *m)
{
    return (src_mark){ (unsigned)m->line + 1, (unsigned)m->column + 1 };
}

static void node_free(ynode *n)
{
    if (!n)
        return;
    for (unsigned i = 0; i < n->n; i++) {
        node_free(n->items[i]);
        if (n->keys)
            node_free(n->keys[i]);
    }
    free(n->items);
    free(n->keys);
    free(n->text);
    free(n);
}

static int next_event(parse_ctx *c, yaml_event_t *ev)
{
    if (yaml_parser_parse(&c->parser, ev))
        return 0;
    const yaml_parser_t *p = &c->parser;
    src_mark at = mark_of(p->problem ? &p->problem_mark : &p->context_mark);
    return diag_at(c->d, c->path, at, "not valid YAML: %s%s%s", p->problem ? p->problem : "?",
                   p->context ? " " : "", p->context ? p->context : "");
}

static int append(ynode *n, ynode *key, ynode *value)
{
    ynode **items = realloc(n->items, (n->n + 1) * sizeof *items);
    if (!items)
        return -1;
    n->items = items;
    if (n->kind == YNODE_MAP) {
        ynode **keys = realloc(n->keys, (n->n + 1) * sizeof *keys);
        if (!keys)
            return -1;
        n->keys = keys;
        n->keys[n->n] = key;
    }
    n->items[n->n++] = value;
    return 0;
}

static int parse_node(parse_ctx *c, yaml_event_t *ev, int depth, ynode **out);

static int parse_children(parse_ctx *c, ynode *n, int depth)
{
    yaml_event_type_t end = n->kind == YNODE_MAP ? YAML_MAPPING_END_EVENT
                                                 : YAML_SEQUENCE_END_EVENT;
    for (;;) {
        yaml_event_t ev;
        if (next_event(c, &ev))
            return -1;
        if (ev.type == end) {
            yaml_event_delete(&ev);
            return 0;
        }
        ynode *key = NULL, *value = NULL;
        if (n->kind == YNODE_MAP) {
            if (parse_node(c, &ev, depth + 1, &key))
                return -1;
            if (key->kind != YNODE_SCALAR) {
                src_mark at = key->mark;
                node_free(key);
                return diag_at(c->d, c->path, at, "a key must be a plain name, not a %s",
                               ynode_kind_name(key->kind));
            }
            if (ynode_get(n, key->text)) {
                src_mark at = key->mark;
                int rc = diag_at(c->d, c->path, at, "key '%s' appears twice in this map",
                                 key->text);
                node_free(key);
                return rc;
            }
            if (next_event(c, &ev)) {
                node_free(key);
                return -1;
            }
        }
        if (parse_node(c, &ev, depth + 1, &value) || append(n, key, value)) {
            node_free(key);
            node_free(value);
            return diag_set(c->d, "%s: out of memory", c->path);
        }
    }
}

/* Takes ownership of *ev (deletes it). */
static int parse_node(parse_ctx *c, yaml_event_t *ev, int depth, ynode **out)
{
    *out = NULL;
    src_mark at = mark_of(&ev->start_mark);
    if (depth > MAX_DEPTH) {
        yaml_event_delete(ev);
        return diag_at(c->d, c->path, at, "nested more than %d levels deep", MAX_DEPTH);
    }
    if (ev->type == YAML_ALIAS_EVENT) {
        yaml_event_delete(ev);
        return diag_at(c->d, c->path, at, "aliases (*name) are not supported in graph files");
    }
    if ((ev->type == YAML_SCALAR_EVENT && ev->data.scalar.anchor) ||
        (ev->type == YAML_SEQUENCE_START_EVENT && ev->data.sequence_start.anchor) ||
        (ev->type == YAML_MAPPING_START_EVENT && ev->data.mapping_start.anchor)) {
        yaml_event_delete(ev);
        return diag_at(c->d, c->path, at, "anchors (&name) are not supported in graph files");
    }
    ynode *n = calloc(1, sizeof *n);
    if (!n) {
        yaml_event_delete(ev);
        return diag_set(c->d, "%s: out of memory", c->path);
    }
    n->mark = at;
    int rc = 0;
    switch (ev->type) {
    case YAML_SCALAR_EVENT:
        n->kind = YNODE_SCALAR;
        n->text = strdup((const char *)ev->data.scalar.value);
        n->quoted = ev->data.scalar.style == YAML_SINGLE_QUOTED_SCALAR_STYLE ||
                    ev->data.scalar.style == YAML_DOUBLE_QUOTED_SCALAR_STYLE;
        if (!n->text)
            rc = diag_set(c->d, "%s: out of memory", c->path);
        yaml_event_delete(ev);
        break;
    case YAML_SEQUENCE_START_EVENT:
    case YAML_MAPPING_START_EVENT:
        n->kind = ev->type == YAML_MAPPING_START_EVENT ? YNODE_MAP : YNODE_SEQ;
        yaml_event_delete(ev);
        rc = parse_children(c, n, depth);
        break;
    default:
        yaml_event_delete(ev);
        rc = diag_at(c->d, c->path, at, "unexpected YAML structure");
        break;
    }
    if (rc) {
        node_free(n);
        return -1;
    }
    *out = n;
    return 0;
}

static int parse_stream(parse_ctx *c, ydoc *doc)
{
    yaml_event_t ev;
    if (next_event(c, &ev))
        return -1;
    yaml_event_delete(&ev); /* STREAM_START */
    if (next_event(c, &ev))
        return -1;
    if (ev.type == YAML_STREAM_END_EVENT) {
        yaml_event_delete(&ev);
        return 0;
    }
    yaml_event_delete(&ev); /* DOCUMENT_START */
    if (next_event(c, &ev) || parse_node(c, &ev, 0, &doc->root))
        return -1;
    if (next_event(c, &ev))
        return -1;
    yaml_event_delete(&ev); /* DOCUMENT_END */
    if (next_event(c, &ev))
        return -1;
    int more = ev.type != YAML_STREAM_END_EVENT;
    src_mark at = mark_of(&ev.start_mark);
    yaml_event_delete(&ev);
    if (more)
        return diag_at(c->d, c->path, at, "a graph file holds one YAML document, found a second");
    return 0;
}

int ydoc_load(ydoc *doc, const char *path, const char *text, diag *d)
{
    memset(doc, 0, sizeof *doc);
    doc->path = strdup(path);
    if (!doc->path)
        return diag_set(d, "out of memory");
    FILE *f = NULL;
    if (!text) {
        f = fopen(path, "rb");
        if (!f)
            return diag_set(d, "%s: cannot open: %s", path, strerror(errno));
        struct stat st;
        if (fstat(fileno(f), &st) == 0 && S_ISDIR(st.st_mode)) {
            fclose(f);
            return diag_set(d, "%s: is a folder, not a graph file", path);
        }
    }
    parse_ctx c = { .path = path, .d = d };
    yaml_parser_initialize(&c.parser);
    if (f)
        yaml_parser_set_input_file(&c.parser, f);
    else
        yaml_parser_set_input_string(&c.parser, (const unsigned char *)text, strlen(text));
    int rc = parse_stream(&c, doc);
    yaml_parser_delete(&c.parser);
    if (f)
        fclose(f);
    if (rc) {
        node_free(doc->root);
        doc->root = NULL;
    }
    return rc;
}

void ydoc_free(ydoc *doc)
{
    node_free(doc->root);
    free(doc->path);
    memset(doc, 0, sizeof *doc);
}

void ynode_free(ynode *n) { node_free(n); }

ynode *ydoc_take_root(ydoc *doc)
{
    ynode *root = doc->root;
    doc->root = NULL;
    return root;
}

void ynode_unmark(ynode *n)
{
    n->mark = (src_mark){ 0, 0 };
    for (unsigned i = 0; i < n->n; i++) {
        ynode_unmark(n->items[i]);
        if (n->keys)
            ynode_unmark(n->keys[i]);
    }
}

int ynode_map_set(ynode *map, const char *key, ynode *value)
{
    for (unsigned i = 0; i < map->n; i++)
        if (strcmp(map->keys[i]->text, key) == 0) {
            node_free(map->items[i]);
            map->items[i] = value;
            return 0;
        }
    ynode *k = calloc(1, sizeof *k);
    if (!k || !(k->text = strdup(key))) {
        free(k);
        return -1;
    }
    k->kind = YNODE_SCALAR;
    k->mark = value->mark;
    if (append(map, k, value)) {
        node_free(k);
        return -1;
    }
    return 0;
}

ynode *ynode_get(const ynode *map, const char *key)
{
    if (!map || map->kind != YNODE_MAP)
        return NULL;
    for (unsigned i = 0; i < map->n; i++)
        if (strcmp(map->keys[i]->text, key) == 0)
            return map->items[i];
    return NULL;
}

const char *ynode_kind_name(ynode_kind kind)
{
    switch (kind) {
    case YNODE_SCALAR: return "single value";
    case YNODE_SEQ: return "list";
    case YNODE_MAP: return "map";
    }
    return "?";
}
