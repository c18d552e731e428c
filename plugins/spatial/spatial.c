/* spatial: a fixed spatial filter -- every output channel a weighted sum of the input channels
 * at the same instant. Three ways to give the weights:
 *   car        (the default) common average reference: each channel minus the mean of all;
 *   laplacian  small surface Laplacian: each channel minus the mean of its nearest neighbours
 *              (Hjorth 1975, "An on-line transformation of EEG scalp potentials into
 *              orthogonal source derivations", EEG Clin. Neurophysiol. 39:526-530);
 *   matrix     `weights` (C_out x C_in) as written.
 * Laplacian neighbours are the adjacent positions on the 10-10 naming grid (see
 * montage_grid.c), or given explicitly with `neighbours`. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <weft/stage.h>

#include "../common_spatial/spatial_matrix.h"
#include "montage_grid.h"

#define LABEL_LEN 32
#define MAX_NEIGHBOURS 16

static const weft_param_spec params[] = {
    { "mode", WEFT_PARAM_CHOICE, 0, "car", WEFT_NO_RANGE, "", "car|laplacian|matrix",
      "car: common average reference; laplacian: each channel minus the mean of its "
      "neighbours; matrix: the given weights" },
    { "weights", WEFT_PARAM_MATRIX, 0, "[]", WEFT_NO_RANGE, "", NULL,
      "mode matrix: one row per output channel, one column per input channel" },
    { "labels", WEFT_PARAM_STRINGS, 0, "[]", WEFT_NO_RANGE, "", NULL,
      "mode matrix: names of the output channels (default s1, s2 ...)" },
    { "neighbours", WEFT_PARAM_STRINGS, 0, "[]", WEFT_NO_RANGE, "", NULL,
      "mode laplacian: entries \"C3: FC3 CP3 C1 C5\" replacing the 10-10 grid's neighbours of "
      "a channel" },
    WEFT_PARAMS_END,
};

typedef struct spatial {
    spatial_matrix m;
    char (*label_text)[LABEL_LEN];
    const char **labels;
} spatial;

static void destroy(void *self)
{
    spatial *s = self;
    if (!s)
        return;
    spatial_matrix_free(&s->m);
    free(s->label_text);
    free(s->labels);
    free(s);
}

static int from_weights(spatial *s, const weft_host *host, const weft_param *w,
                        const weft_layout *in)
{
    if (w->rows == 0 || w->cols != in->channels) {
        host->param_error(host, "weights", "weights is %u x %u; mode matrix needs C_out x C_in "
                          "with C_in = %u (the channels of '%s')", w->rows, w->cols,
                          in->channels, in->name ? in->name : "the input");
        return WEFT_EINVAL;
    }
    if (w->rows > 4096) {
        host->param_error(host, "weights", "weights has %u rows; at most 4096", w->rows);
        return WEFT_EINVAL;
    }
    if (spatial_matrix_init(&s->m, w->rows, w->cols))
        return WEFT_ENOMEM;
    spatial_matrix_set(&s->m, w->values);
    return WEFT_OK;
}

static int common_average(spatial *s, const weft_layout *in)
{
    uint32_t c = in->channels;
    if (spatial_matrix_init(&s->m, c, c))
        return WEFT_ENOMEM;
    for (uint32_t i = 0; i < c; i++)
        for (uint32_t j = 0; j < c; j++)
            s->m.w[(size_t)i * c + j] = (float)((i == j ? 1.0 : 0.0) - 1.0 / c);
    return WEFT_OK;
}

static int find_label(const weft_layout *in, const char *name, size_t len)
{
    for (uint32_t j = 0; in->labels && j < in->channels; j++)
        if (strlen(in->labels[j]) == len && !strncasecmp_ascii(in->labels[j], name, len))
            return (int)j;
    return -1;
}

/* "C3: FC3 CP3 C1 C5" -> the channel and its neighbours' indices. */
static int parse_neighbours(const weft_host *host, const char *entry, const weft_layout *in,
                            int *channel, int *nb, unsigned *n_nb)
{
    const char *colon = strchr(entry, ':');
    const char *p = entry;
    while (*p == ' ')
        p++;
    size_t len = colon ? (size_t)(colon - p) : 0;
    while (len && p[len - 1] == ' ')
        len--;
    *channel = colon ? find_label(in, p, len) : -1;
    if (*channel < 0) {
        host->param_error(host, "neighbours", "'%s' must read CHANNEL: NEIGHBOUR ..., with "
                          "channels of '%s'", entry, in->name ? in->name : "the input");
        return WEFT_EINVAL;
    }
    *n_nb = 0;
    for (p = colon + 1; *p;) {
        while (*p == ' ' || *p == ',')
            p++;
        size_t n = strcspn(p, " ,");
        if (!n)
            break;
        int j = find_label(in, p, n);
        if (j < 0 || j == *channel || *n_nb == MAX_NEIGHBOURS) {
            host->param_error(host, "neighbours", "in '%s': '%.*s' is %s", entry, (int)n, p,
                              j < 0 ? "not a channel of the input"
                              : j == *channel ? "the channel itself"
                                              : "one neighbour too many (at most 16)");
            return WEFT_EINVAL;
        }
        nb[(*n_nb)++] = j;
        p += n;
    }
    return WEFT_OK;
}

static void set_laplacian_row(spatial *s, uint32_t c, const int *nb, unsigned n_nb)
{
    float *row = s->m.w + (size_t)c * s->m.cols;
    for (uint32_t j = 0; j < s->m.cols; j++)
        row[j] = 0;
    row[c] = 1;
    for (unsigned k = 0; k < n_nb; k++)
        row[nb[k]] -= (float)(1.0 / n_nb);
}

static int laplacian(spatial *s, const weft_host *host, const weft_param *given,
                     const weft_layout *in)
{
    uint32_t c = in->channels;
    if (!in->labels) {
        host->error(host, "mode laplacian needs channel labels, and input '%s' has none",
                    in->name ? in->name : "?");
        return WEFT_EINVAL;
    }
    if (spatial_matrix_init(&s->m, c, c))
        return WEFT_ENOMEM;
    int nb[MAX_NEIGHBOURS];
    for (uint32_t i = 0; i < c; i++) {
        unsigned n = montage_grid_neighbours(in->labels, c, i, nb, MAX_NEIGHBOURS);
        set_laplacian_row(s, i, nb, n);
    }
    for (uint32_t e = 0; e < given->n_strings; e++) {
        int ch;
        unsigned n;
        if (parse_neighbours(host, given->strings[e], in, &ch, nb, &n))
            return WEFT_EINVAL;
        set_laplacian_row(s, (uint32_t)ch, nb, n);
    }
    for (uint32_t i = 0; i < c; i++) {
        int alone = 1;
        for (uint32_t j = 0; j < c; j++)
            alone &= j == i || s->m.w[(size_t)i * c + j] == 0;
        if (alone) {
            host->param_error(host, "neighbours", "channel '%s' has no neighbour in this "
                              "montage on the 10-10 grid; give it one with neighbours: "
                              "[\"%s: NAME ...\"]", in->labels[i], in->labels[i]);
            return WEFT_EINVAL;
        }
    }
    return WEFT_OK;
}

static int make_labels(spatial *s, const weft_host *host, const weft_param *names,
                       const weft_layout *in, int keep_input)
{
    uint32_t c = s->m.rows;
    if (names->n_strings && names->n_strings != c) {
        host->param_error(host, "labels", "labels has %u names for %u output channels",
                          names->n_strings, c);
        return WEFT_EINVAL;
    }
    s->label_text = calloc(c, sizeof *s->label_text);
    s->labels = calloc(c, sizeof *s->labels);
    if (!s->label_text || !s->labels)
        return WEFT_ENOMEM;
    for (uint32_t i = 0; i < c; i++) {
        if (names->n_strings)
            snprintf(s->label_text[i], LABEL_LEN, "%s", names->strings[i]);
        else if (keep_input && in->labels)
            snprintf(s->label_text[i], LABEL_LEN, "%s", in->labels[i]);
        else
            snprintf(s->label_text[i], LABEL_LEN, "s%u", (unsigned)(i + 1));
        s->labels[i] = s->label_text[i];
    }
    return WEFT_OK;
}

static int init(const weft_host *host, const weft_params *p, const weft_layout *in,
                uint32_t n_in, weft_layout *out, void **self)
{
    (void)n_in;
    spatial *s = calloc(1, sizeof *s);
    if (!s) {
        host->error(host, "out of memory");
        return WEFT_ENOMEM;
    }
    const char *mode = weft_param_text(p, "mode");
    int rc;
    if (strcmp(mode, "matrix") && weft_param_get(p, "weights")->rows) {
        host->param_error(host, "weights", "weights is only used with mode: matrix (mode is "
                          "%s)", mode);
        rc = WEFT_EINVAL;
    } else if (!strcmp(mode, "car"))
        rc = common_average(s, in);
    else if (!strcmp(mode, "laplacian"))
        rc = laplacian(s, host, weft_param_get(p, "neighbours"), in);
    else
        rc = from_weights(s, host, weft_param_get(p, "weights"), in);
    if (rc == WEFT_OK)
        rc = make_labels(s, host, weft_param_get(p, "labels"), in, strcmp(mode, "matrix") != 0);
    if (rc != WEFT_OK) {
        if (rc == WEFT_ENOMEM)
            host->error(host, "out of memory for a %u-channel spatial filter", in->channels);
        destroy(s);
        return rc;
    }
    out->kind = WEFT_STREAM_SAMPLES;
    out->channels = s->m.rows;
    out->rate = in->rate;
    out->labels = s->labels;
    *self = s;
    return WEFT_OK;
}

static int process(void *self, const weft_block *in, uint32_t n_in, weft_block *out)
{
    (void)n_in;
    spatial *s = self;
    spatial_matrix_apply(&s->m, in->data, in->frames, out->data);
    out->frames = in->frames;
    return WEFT_OK;
}

static const weft_stage_api api = {
    WEFT_API_HEADER,
    .roles = WEFT_ROLE_FILTER,
    .name = "spatial",
    .version = "0.1.0",
    .summary = "fixed spatial filter: a weight matrix, common average reference or small "
               "Laplacian",
    .params = params,
    .min_inputs = 1,
    .max_inputs = 1,
    .init = init,
    .process = process,
    .destroy = destroy,
};

WEFT_STAGE(api)
