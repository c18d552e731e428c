/* montage_grid: the 10-10 naming grid. The positions follow the electrode nomenclature of the
 * extended 10-20 system (American Electroencephalographic Society 1991 guidelines; Oostenveld
 * and Praamstra 2001, Clin. Neurophysiol. 112:713-719, Fig. 1): a name is a row prefix and a
 * column, T7/T8 sit at the lateral ends of the C row, and the old names T3/T4/T5/T6 are
 * T7/T8/P7/P8. No coordinates are used: on this grid the nearest neighbours of an electrode
 * are the ones one step away, the "small Laplacian" neighbourhood (Hjorth 1975; McFarland et
 * al. 1997, EEG Clin. Neurophysiol. 103:386-394). */
#include "montage_grid.h"

#include <string.h>

static char upper(char c) { return c >= 'a' && c <= 'z' ? (char)(c - 'a' + 'A') : c; }

int strncasecmp_ascii(const char *a, const char *b, size_t len)
{
    for (size_t i = 0; i < len; i++) {
        char x = upper(a[i]), y = upper(b[i]);
        if (x != y)
            return x < y ? -1 : 1;
        if (!x)
            return 0;
    }
    return 0;
}

typedef struct row_prefix {
    const char *prefix;
    int row;
} row_prefix;

/* Longest prefixes first, so "FC" is not read as "F". The temporal rows FT, T, TP share the
 * FC, C, CP rows at their lateral ends. */
static const row_prefix prefixes[] = {
    { "FP", 0 }, { "AF", 1 }, { "FC", 3 }, { "FT", 3 }, { "CP", 5 }, { "TP", 5 }, { "PO", 7 },
    { "F", 2 },  { "C", 4 },  { "T", 4 },  { "P", 6 },  { "O", 8 },  { "I", 9 },  { "N", -1 },
};

static int old_temporal(const char *name, int *row, int *column)
{
    static const struct { const char *name; int row, column; } old[] = {
        { "T3", 4, -4 }, { "T4", 4, 4 }, { "T5", 6, -4 }, { "T6", 6, 4 },
    };
    for (size_t i = 0; i < sizeof old / sizeof old[0]; i++)
        if (strlen(name) == 2 && !strncasecmp_ascii(name, old[i].name, 2)) {
            *row = old[i].row;
            *column = old[i].column;
            return 1;
        }
    return 0;
}

int montage_grid_position(const char *name, int *row, int *column)
{
    if (old_temporal(name, row, column))
        return 0;
    for (size_t i = 0; i < sizeof prefixes / sizeof prefixes[0]; i++) {
        size_t len = strlen(prefixes[i].prefix);
        if (strncasecmp_ascii(name, prefixes[i].prefix, len))
            continue;
        const char *rest = name + len;
        if (upper(rest[0]) == 'Z' && rest[1] == 0) {
            *row = prefixes[i].row;
            *column = 0;
            return 0;
        }
        int n = 0;
        if (!rest[0] || rest[0] == '0')
            continue;
        for (; *rest >= '0' && *rest <= '9'; rest++)
            n = n * 10 + (*rest - '0');
        if (*rest || n > 12)
            continue;
        *row = prefixes[i].row;
        *column = n % 2 ? -(n + 1) / 2 : n / 2;
        return 0;
    }
    return -1;
}

unsigned montage_grid_neighbours(const char *const *labels, uint32_t n, uint32_t channel,
                                 int *out, unsigned max)
{
    int r0, c0;
    if (montage_grid_position(labels[channel], &r0, &c0))
        return 0;
    unsigned count = 0;
    for (uint32_t j = 0; j < n && count < max; j++) {
        int r, c;
        if (j == channel || montage_grid_position(labels[j], &r, &c))
            continue;
        int dr = r - r0, dc = c - c0;
        if ((dr == 0 && (dc == 1 || dc == -1)) || (dc == 0 && (dr == 1 || dr == -1)))
            out[count++] = (int)j;
    }
    return count;
}
