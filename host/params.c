/* params: typed, range-checked parameter values from YAML nodes and declared defaults. */
#include "params.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "yaml_value.h"

/* Bounds on list sizes from a graph file: a hostile file must not make us allocate without
 * limit. 1M entries is far beyond any filter bank or fitted weight matrix. */
#define MAX_LIST 1000000u

typedef struct resolver {
    const ydoc *doc;
    const char *stage;
    diag *d;
} resolver;

const char *param_type_name(uint32_t type)
{
    switch (type) {
    case WEFT_PARAM_NUMBER: return "number";
    case WEFT_PARAM_INTEGER: return "integer";
    case WEFT_PARAM_BOOLEAN: return "boolean";
    case WEFT_PARAM_STRING: return "string";
    case WEFT_PARAM_CHOICE: return "choice";
    case WEFT_PARAM_NUMBERS: return "list of numbers";
    case WEFT_PARAM_MATRIX: return "matrix";
    case WEFT_PARAM_STRINGS: return "list of strings";
    }
    return "?";
}

static int has_range(const weft_param_spec *s) { return s->min <= s->max; }

static int check_range(resolver *r, const weft_param_spec *s, const ynode *n, double v)
{
    if (!has_range(s) || (v >= s->min && v <= s->max))
        return 0;
    const char *unit = s->unit && s->unit[0] ? s->unit : "";
    return diag_at(r->d, r->doc->path, n->mark,
                   "stage '%s': %s = %g%s%s is out of range; it must be between %g and %g%s%s",
                   r->stage, s->name, v, unit[0] ? " " : "", unit, s->min, s->max,
                   unit[0] ? " " : "", unit);
}

static int choice_ok(const char *choices, const char *v)
{
    size_t len = strlen(v);
    for (const char *c = choices; c && *c;) {
        const char *bar = strchr(c, '|');
        size_t n = bar ? (size_t)(bar - c) : strlen(c);
        if (n == len && strncmp(c, v, n) == 0)
            return 1;
        c = bar ? bar + 1 : NULL;
    }
    return 0;
}

static int read_numbers(resolver *r, const weft_param_spec *s, const ynode *n, weft_param *p)
{
    char what[160];
    snprintf(what, sizeof what, "stage '%s': %s", r->stage, s->name);
    int matrix = s->type == WEFT_PARAM_MATRIX;
    if (yval_expect(r->doc, n, YNODE_SEQ, what, r->d))
        return -1;
    uint32_t rows = matrix ? n->n : 1, cols = matrix ? 0 : n->n;
    if (matrix && rows > 0) {
        if (yval_expect(r->doc, n->items[0], YNODE_SEQ, "each row of a matrix", r->d))
            return -1;
        cols = n->items[0]->n;
    }
    if (rows && cols > MAX_LIST / rows)
        return diag_at(r->d, r->doc->path, n->mark, "%s has more than %u entries", what,
                       MAX_LIST);
    double *v = calloc((size_t)rows * cols + 1, sizeof *v);
    if (!v)
        return diag_set(r->d, "out of memory");
    p->values = v;
    p->rows = rows;
    p->cols = cols;
    for (uint32_t i = 0; i < rows; i++) {
        const ynode *row = matrix ? n->items[i] : n;
        if (matrix && yval_expect(r->doc, row, YNODE_SEQ, "each row of a matrix", r->d))
            return -1;
        if (row->n != cols)
            return diag_at(r->d, r->doc->path, row->mark,
                           "%s: row %u has %u entries, row 1 has %u; a matrix is rectangular",
                           what, i + 1, row->n, cols);
        for (uint32_t j = 0; j < cols; j++) {
            double x;
            if (yval_number(r->doc, row->items[j], what, &x, r->d) ||
                check_range(r, s, row->items[j], x))
                return -1;
            v[(size_t)i * cols + j] = x;
        }
    }
    return 0;
}

static int read_strings(resolver *r, const weft_param_spec *s, const ynode *n, weft_param *p)
{
    char what[160];
    snprintf(what, sizeof what, "stage '%s': %s", r->stage, s->name);
    if (yval_expect(r->doc, n, YNODE_SEQ, what, r->d))
        return -1;
    char **v = calloc(n->n + 1, sizeof *v);
    if (!v)
        return diag_set(r->d, "out of memory");
    p->strings = (const char *const *)v;
    for (unsigned i = 0; i < n->n; i++) {
        const char *text;
        if (yval_string(r->doc, n->items[i], what, &text, r->d))
            return -1;
        if (!(v[i] = strdup(text)))
            return diag_set(r->d, "out of memory");
        p->n_strings++;
    }
    return 0;
}

static int read_value(resolver *r, const weft_param_spec *s, const ynode *n, weft_param *p)
{
    char what[160];
    snprintf(what, sizeof what, "stage '%s': %s", r->stage, s->name);
    long long i;
    int b;
    const char *text;
    switch (s->type) {
    case WEFT_PARAM_NUMBER:
        return yval_number(r->doc, n, what, &p->number, r->d) ||
               check_range(r, s, n, p->number) ? -1 : 0;
    case WEFT_PARAM_INTEGER:
        if (yval_integer(r->doc, n, what, &i, r->d))
            return -1;
        p->number = (double)i;
        return check_range(r, s, n, p->number);
    case WEFT_PARAM_BOOLEAN:
        if (yval_bool(r->doc, n, what, &b, r->d))
            return -1;
        p->number = b;
        return 0;
    case WEFT_PARAM_STRING:
    case WEFT_PARAM_CHOICE:
        if (yval_string(r->doc, n, what, &text, r->d))
            return -1;
        if (s->type == WEFT_PARAM_CHOICE && !choice_ok(s->choices, text))
            return diag_at(r->d, r->doc->path, n->mark,
                           "stage '%s': %s = '%s' is not one of %s", r->stage, s->name, text,
                           s->choices ? s->choices : "(none)");
        return (p->text = strdup(text)) ? 0 : diag_set(r->d, "out of memory");
    case WEFT_PARAM_NUMBERS:
    case WEFT_PARAM_MATRIX:
        return read_numbers(r, s, n, p);
    case WEFT_PARAM_STRINGS:
        return read_strings(r, s, n, p);
    }
    return diag_set(r->d, "stage '%s': %s has an unknown type", r->stage, s->name);
}

/* Defaults are written as graph text, so they go through the same parser and checks. */
static int read_default(resolver *r, const weft_param_spec *s, weft_param *p)
{
    /* Text defaults are taken as written: "-" or "yes" must not turn into YAML structure. */
    if (s->type == WEFT_PARAM_STRING)
        return (p->text = strdup(s->default_text)) ? 0 : diag_set(r->d, "out of memory");
    ydoc doc;
    diag inner = { 0 };
    char name[256];
    snprintf(name, sizeof name, "default of %s", s->name);
    if (ydoc_load(&doc, name, s->default_text, &inner) || !doc.root) {
        ydoc_free(&doc);
        return diag_set(r->d, "stage '%s': the plugin's default for %s ('%s') is not valid: %s",
                        r->stage, s->name, s->default_text, inner.msg);
    }
    resolver inner_r = { &doc, r->stage, &inner };
    int rc = read_value(&inner_r, s, doc.root, p);
    ydoc_free(&doc);
    if (rc)
        return diag_set(r->d, "plugin default is invalid: %s", inner.msg);
    return 0;
}

static int check_unknown(resolver *r, const weft_param_spec *specs, const ynode *given)
{
    const char *names[256];
    unsigned n_names = 0;
    for (const weft_param_spec *s = specs; s && s->name && n_names < 256; s++)
        names[n_names++] = s->name;
    for (unsigned i = 0; given && i < given->n; i++) {
        const char *key = given->keys[i]->text;
        unsigned k = 0;
        while (k < n_names && strcmp(names[k], key) != 0)
            k++;
        if (k < n_names)
            continue;
        const char *near = yval_nearest(key, names, n_names);
        return diag_at(r->d, r->doc->path, given->keys[i]->mark,
                       "stage '%s': the plugin has no parameter '%s'%s%s%s (see `weft stages`)",
                       r->stage, key, near ? "; did you mean '" : "", near ? near : "",
                       near ? "'?" : "");
    }
    return 0;
}

static int copy_value(weft_param *dst, const weft_param *src);

static int resolve(param_set *ps, const weft_param_spec *specs, const ynode *given,
                   const ydoc *doc, const char *stage, const param_set *base, diag *d)
{
    memset(ps, 0, sizeof *ps);
    resolver r = { doc, stage, d };
    if (check_unknown(&r, specs, given))
        return -1;
    uint32_t count = 0;
    while (specs && specs[count].name)
        count++;
    ps->items = calloc(count + 1, sizeof *ps->items);
    ps->marks = calloc(count + 1, sizeof *ps->marks);
    if (!ps->items || !ps->marks)
        return diag_set(d, "out of memory");
    for (uint32_t i = 0; i < count; i++) {
        const weft_param_spec *s = &specs[i];
        weft_param *p = &ps->items[i];
        p->name = s->name;
        p->type = s->type;
        ps->count++;
        const ynode *n = ynode_get(given, s->name);
        const weft_param *old = base && i < base->count && base->items[i].given &&
                                        strcmp(base->items[i].name, s->name) == 0
                                    ? &base->items[i]
                                    : NULL;
        if (n) {
            p->given = 1;
            ps->marks[i] = n->mark;
            if (read_value(&r, s, n, p))
                return -1;
        } else if (old) {
            if (copy_value(p, old))
                return diag_set(d, "out of memory");
        } else if (s->default_text) {
            if (read_default(&r, s, p))
                return -1;
        } else if (!(s->flags & WEFT_PARAM_LEARNED)) {
            src_mark at = given ? given->mark : (src_mark){ 0, 0 };
            return diag_at(d, doc->path, at, "stage '%s': parameter '%s' (%s%s%s) is required",
                           stage, s->name, param_type_name(s->type), s->help ? ": " : "",
                           s->help ? s->help : "");
        }
    }
    ps->view.items = ps->items;
    ps->view.count = ps->count;
    return 0;
}

int param_set_resolve(param_set *ps, const weft_param_spec *specs, const ynode *given,
                      const ydoc *doc, const char *stage, diag *d)
{
    return resolve(ps, specs, given, doc, stage, NULL, d);
}

int param_set_resolve_over(param_set *ps, const weft_param_spec *specs, const ynode *given,
                           const ydoc *doc, const char *stage, const param_set *base, diag *d)
{
    return resolve(ps, specs, given, doc, stage, base, d);
}

static int copy_value(weft_param *dst, const weft_param *src)
{
    dst->given = src->given;
    dst->number = src->number;
    dst->rows = src->rows;
    dst->cols = src->cols;
    if (src->text && !(dst->text = strdup(src->text)))
        return -1;
    if (src->values) {
        size_t n = (size_t)src->rows * src->cols;
        double *v = malloc((n + 1) * sizeof *v);
        if (!v)
            return -1;
        memcpy(v, src->values, n * sizeof *v);
        dst->values = v;
    }
    if (src->strings) {
        char **v = calloc(src->n_strings + 1, sizeof *v);
        if (!v)
            return -1;
        dst->strings = (const char *const *)v;
        for (uint32_t k = 0; k < src->n_strings; k++) {
            if (!(v[k] = strdup(src->strings[k])))
                return -1;
            dst->n_strings = k + 1;
        }
    }
    return 0;
}

static void clear_value(weft_param *p)
{
    free((void *)p->text);
    free((void *)p->values);
    for (uint32_t k = 0; k < p->n_strings; k++)
        free((void *)p->strings[k]);
    free((void *)p->strings);
    p->text = NULL;
    p->values = NULL;
    p->strings = NULL;
    p->rows = p->cols = p->n_strings = 0;
}

void param_set_free(param_set *ps)
{
    for (uint32_t i = 0; i < ps->count; i++)
        clear_value(&ps->items[i]);
    free(ps->items);
    free(ps->marks);
    memset(ps, 0, sizeof *ps);
}

static weft_param *find(param_set *ps, const char *name, uint32_t type)
{
    for (uint32_t i = 0; i < ps->count; i++)
        if (strcmp(ps->items[i].name, name) == 0)
            return ps->items[i].type == type ? &ps->items[i] : NULL;
    return NULL;
}

int param_set_number(param_set *ps, const char *name, double v)
{
    weft_param *p = find(ps, name, WEFT_PARAM_NUMBER);
    if (!p)
        p = find(ps, name, WEFT_PARAM_INTEGER);
    if (!p || !isfinite(v))
        return -1;
    p->number = v;
    p->given = 1;
    return 0;
}

int param_set_numbers(param_set *ps, const char *name, const double *v, uint32_t rows,
                      uint32_t cols, int matrix)
{
    weft_param *p = find(ps, name, matrix ? WEFT_PARAM_MATRIX : WEFT_PARAM_NUMBERS);
    if (!p || (rows && cols > MAX_LIST / rows))
        return -1;
    size_t n = (size_t)rows * cols;
    double *copy = malloc((n + 1) * sizeof *copy);
    if (!copy)
        return -1;
    for (size_t i = 0; i < n; i++) {
        if (!isfinite(v[i])) {
            free(copy);
            return -1;
        }
        copy[i] = v[i];
    }
    clear_value(p);
    p->values = copy;
    p->rows = matrix ? rows : 1;
    p->cols = matrix ? cols : (uint32_t)n;
    p->given = 1;
    return 0;
}

int param_set_strings(param_set *ps, const char *name, const char *const *v, uint32_t n)
{
    weft_param *p = find(ps, name, WEFT_PARAM_STRINGS);
    if (!p)
        return -1;
    char **copy = calloc(n + 1, sizeof *copy);
    if (!copy)
        return -1;
    for (uint32_t i = 0; i < n; i++)
        if (!(copy[i] = strdup(v[i]))) {
            for (uint32_t k = 0; k < i; k++)
                free(copy[k]);
            free(copy);
            return -1;
        }
    clear_value(p);
    p->strings = (const char *const *)copy;
    p->n_strings = n;
    p->given = 1;
    return 0;
}

src_mark param_set_mark(const param_set *ps, const char *name, src_mark fallback)
{
    for (uint32_t i = 0; i < ps->count; i++)
        if (strcmp(ps->items[i].name, name) == 0 && ps->marks[i].line)
            return ps->marks[i];
    return fallback;
}

/* The shortest text that reads back as the same double: fitted weights must survive the trip
 * through a graph file bit for bit, or the fitted graph would not stream as it did in fit. */
static int format_double(char *buf, size_t size, double v)
{
    char tmp[40];
    snprintf(tmp, sizeof tmp, "%.15g", v);
    if (strtod(tmp, NULL) != v)
        snprintf(tmp, sizeof tmp, "%.17g", v);
    return snprintf(buf, size, "%s", tmp);
}

typedef struct out_buf {
    char *buf;
    size_t size, len;
} out_buf;

static void put(out_buf *o, const char *s)
{
    size_t n = strlen(s);
    if (o->len < o->size) {
        size_t room = o->size - o->len;
        memcpy(o->buf + o->len, s, n < room ? n : room - 1);
        o->buf[o->len + (n < room ? n : room - 1)] = 0;
    }
    o->len += n;
}

static void put_double(out_buf *o, double v)
{
    char tmp[40];
    format_double(tmp, sizeof tmp, v);
    put(o, tmp);
}

static void put_quoted(out_buf *o, const char *s)
{
    put(o, "\"");
    for (; *s; s++) {
        char c[3] = { *s, 0, 0 };
        if (*s == '"' || *s == '\\') {
            c[0] = '\\';
            c[1] = *s;
        }
        put(o, c);
    }
    put(o, "\"");
}

size_t param_format(const weft_param *p, char *buf, size_t size)
{
    out_buf o = { buf, size, 0 };
    if (size)
        buf[0] = 0;
    switch (p->type) {
    case WEFT_PARAM_NUMBER: put_double(&o, p->number); break;
    case WEFT_PARAM_INTEGER: {
        char tmp[32];
        snprintf(tmp, sizeof tmp, "%.0f", p->number);
        put(&o, tmp);
        break;
    }
    case WEFT_PARAM_BOOLEAN: put(&o, p->number != 0 ? "true" : "false"); break;
    case WEFT_PARAM_STRING:
    case WEFT_PARAM_CHOICE: put_quoted(&o, p->text ? p->text : ""); break;
    case WEFT_PARAM_NUMBERS:
    case WEFT_PARAM_MATRIX:
        put(&o, "[");
        for (uint32_t i = 0; i < p->rows; i++) {
            if (p->type == WEFT_PARAM_MATRIX)
                put(&o, i ? ", [" : "[");
            for (uint32_t j = 0; j < p->cols; j++) {
                if (j)
                    put(&o, ", ");
                put_double(&o, p->values[(size_t)i * p->cols + j]);
            }
            if (p->type == WEFT_PARAM_MATRIX)
                put(&o, "]");
        }
        put(&o, "]");
        break;
    case WEFT_PARAM_STRINGS:
        put(&o, "[");
        for (uint32_t i = 0; i < p->n_strings; i++) {
            if (i)
                put(&o, ", ");
            put_quoted(&o, p->strings[i]);
        }
        put(&o, "]");
        break;
    }
    return o.len;
}
