/* yaml_value: typed reads of YAML scalars (YAML 1.2 core schema spellings only). */
#include "yaml_value.h"

#include <errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

int yval_expect(const ydoc *doc, const ynode *n, ynode_kind kind, const char *what, diag *d)
{
    if (n->kind == kind)
        return 0;
    return diag_at(d, doc->path, n->mark, "%s must be a %s, not a %s", what,
                   ynode_kind_name(kind), ynode_kind_name(n->kind));
}

int yval_string(const ydoc *doc, const ynode *n, const char *what, const char **out, diag *d)
{
    if (yval_expect(doc, n, YNODE_SCALAR, what, d))
        return -1;
    *out = n->text;
    return 0;
}

int yval_number(const ydoc *doc, const ynode *n, const char *what, double *out, diag *d)
{
    if (yval_expect(doc, n, YNODE_SCALAR, what, d))
        return -1;
    const char *s = n->text;
    char *end = NULL;
    errno = 0;
    double v = strtod(s, &end);
    if (n->quoted || !*s || *end || errno == ERANGE || !isfinite(v))
        return diag_at(d, doc->path, n->mark, "%s must be a finite number, not '%s'", what, s);
    *out = v;
    return 0;
}

int yval_integer(const ydoc *doc, const ynode *n, const char *what, long long *out, diag *d)
{
    if (yval_expect(doc, n, YNODE_SCALAR, what, d))
        return -1;
    const char *s = n->text;
    char *end = NULL;
    errno = 0;
    long long v = strtoll(s, &end, 10);
    if (n->quoted || !*s || *end || errno == ERANGE)
        return diag_at(d, doc->path, n->mark, "%s must be a whole number, not '%s'", what, s);
    *out = v;
    return 0;
}

int yval_bool(const ydoc *doc, const ynode *n, const char *what, int *out, diag *d)
{
    if (yval_expect(doc, n, YNODE_SCALAR, what, d))
        return -1;
    if (!n->quoted && strcmp(n->text, "true") == 0)
        *out = 1;
    else if (!n->quoted && strcmp(n->text, "false") == 0)
        *out = 0;
    else
        return diag_at(d, doc->path, n->mark, "%s must be true or false, not '%s'", what,
                       n->text);
    return 0;
}

/* Levenshtein distance, bounded to short words (names in graph files are short). */
static unsigned edit_distance(const char *a, const char *b)
{
    size_t la = strlen(a), lb = strlen(b);
    if (la > 63 || lb > 63)
        return 99;
    unsigned row[64];
    for (size_t j = 0; j <= lb; j++)
        row[j] = (unsigned)j;
    for (size_t i = 1; i <= la; i++) {
        unsigned diag_prev = row[0];
        row[0] = (unsigned)i;
        for (size_t j = 1; j <= lb; j++) {
            unsigned up = row[j];
            unsigned best = diag_prev + (a[i - 1] != b[j - 1]);
            if (up + 1 < best)
                best = up + 1;
            if (row[j - 1] + 1 < best)
                best = row[j - 1] + 1;
            row[j] = best;
            diag_prev = up;
        }
    }
    return row[lb];
}

const char *yval_nearest(const char *word, const char *const *names, unsigned n_names)
{
    const char *best = NULL;
    unsigned best_d = 3; /* more than two edits is a different word */
    for (unsigned i = 0; i < n_names; i++) {
        unsigned dist = edit_distance(word, names[i]);
        if (dist < best_d) {
            best_d = dist;
            best = names[i];
        }
    }
    return best;
}

int yval_check_keys(const ydoc *doc, const ynode *map, const char *const *allowed,
                    const char *where, diag *d)
{
    unsigned n_allowed = 0;
    while (allowed[n_allowed])
        n_allowed++;
    for (unsigned i = 0; i < map->n; i++) {
        const char *key = map->keys[i]->text;
        unsigned k = 0;
        while (allowed[k] && strcmp(allowed[k], key) != 0)
            k++;
        if (allowed[k])
            continue;
        char list[512] = "";
        for (unsigned j = 0; j < n_allowed; j++) {
            strncat(list, j ? ", " : "", sizeof list - strlen(list) - 1);
            strncat(list, allowed[j], sizeof list - strlen(list) - 1);
        }
        const char *near = yval_nearest(key, allowed, n_allowed);
        if (near)
            return diag_at(d, doc->path, map->keys[i]->mark,
                           "unknown key '%s' in %s; did you mean '%s'?", key, where, near);
        return diag_at(d, doc->path, map->keys[i]->mark,
                       "unknown key '%s' in %s; known keys: %s", key, where, list);
    }
    return 0;
}
