/* fit_reference_tool: exposes weft's fitting math to the reference checks in
 * tests/reference/check_fit_*.py, which compare it with scipy and sklearn on the same data.
 *
 *   fit_reference_tool lw FILE           Ledoit-Wolf intensity of the rows of FILE
 *   fit_reference_tool lda FILE SHRINK   LDA fit (SHRINK: auto, none or a number); FILE holds
 *                                        "n p k", then n rows of "class x1 .. xp"
 *   fit_reference_tool csp FILE PAIRS SHRINK
 *                                        the csp plugin's fit; FILE holds "n channels frames",
 *                                        then per epoch its class and frames x channels values
 *
 * Output: lines "name: v1 v2 ...", numbers printed with 17 significant digits. */
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../../plugins/common_lda/lda.h"
#include "stage_driver.h"

static void tool_error(const weft_host *h, const char *fmt, ...)
{
    (void)h;
    va_list ap;
    va_start(ap, fmt);
    fputs("error: ", stderr);
    vfprintf(stderr, fmt, ap);
    fputc('\n', stderr);
    va_end(ap);
}

static void tool_param_error(const weft_host *h, const char *param, const char *fmt, ...)
{
    (void)h;
    va_list ap;
    va_start(ap, fmt);
    fprintf(stderr, "error (%s): ", param);
    vfprintf(stderr, fmt, ap);
    fputc('\n', stderr);
    va_end(ap);
}

static const weft_host tool_host = { .error = tool_error, .param_error = tool_param_error,
                                     .stage_name = "tool" };

static void print_row(const char *name, const double *v, size_t n)
{
    printf("%s:", name);
    for (size_t i = 0; i < n; i++)
        printf(" %.17g", v[i]);
    printf("\n");
}

static int read_doubles(FILE *f, double *v, size_t n)
{
    for (size_t i = 0; i < n; i++)
        if (fscanf(f, "%lf", &v[i]) != 1)
            return -1;
    return 0;
}

static int cmd_lw(FILE *f)
{
    unsigned n, p;
    if (fscanf(f, "%u %u", &n, &p) != 2 || !n || !p)
        return -1;
    double *x = malloc((size_t)n * p * sizeof *x);
    if (!x || read_doubles(f, x, (size_t)n * p))
        return -1;
    double a = lda_ledoit_wolf_intensity(x, n, p);
    print_row("intensity", &a, 1);
    free(x);
    return 0;
}

static int cmd_lda(FILE *f, const char *shrink_text)
{
    unsigned n, p, k;
    if (fscanf(f, "%u %u %u", &n, &p, &k) != 3 || !n || !p || k < 2 || k > 16)
        return -1;
    double *x = malloc((size_t)n * p * sizeof *x);
    uint32_t *y = malloc(n * sizeof *y);
    if (!x || !y)
        return -1;
    for (unsigned r = 0; r < n; r++) {
        double cls;
        if (read_doubles(f, &cls, 1) || read_doubles(f, x + (size_t)r * p, p) || cls < 0 ||
            cls >= k)
            return -1;
        y[r] = (uint32_t)cls;
    }
    lda_shrinkage sh;
    lda_fit_result res;
    if (lda_shrinkage_parse(&tool_host, shrink_text, &sh) ||
        lda_fit(&tool_host, x, y, n, p, k, &sh, NULL, &res))
        return -1;
    print_row("intensity", res.intensity, k);
    for (unsigned c = 0; c < k; c++)
        print_row("weights", res.weights + (size_t)c * p, p);
    print_row("bias", res.bias, k);
    /* The probabilities through the same code the readouts query with. */
    lda_model m = { .n_classes = k, .n_features = p, .weights = res.weights, .bias = res.bias,
                    .scores = calloc(k, sizeof(double)) };
    double prob[16];
    for (unsigned r = 0; r < n && m.scores; r++) {
        lda_model_probabilities(&m, x + (size_t)r * p, prob);
        print_row("proba", prob, k);
    }
    free(m.scores);
    lda_fit_result_free(&res);
    free(x);
    free(y);
    return 0;
}

static int cmd_csp(FILE *f, const char *pairs, const char *shrink)
{
    unsigned n, ch, frames;
    if (fscanf(f, "%u %u %u", &n, &ch, &frames) != 3 || !n || !ch || !frames)
        return -1;
    float *data = malloc((size_t)n * ch * frames * sizeof *data);
    uint32_t *cls = malloc(n * sizeof *cls);
    weft_window *win = malloc(n * sizeof *win);
    if (!data || !cls || !win)
        return -1;
    for (unsigned e = 0; e < n; e++) {
        double v;
        if (read_doubles(f, &v, 1))
            return -1;
        cls[e] = (uint32_t)v;
        float *d = data + (size_t)e * ch * frames;
        for (size_t i = 0; i < (size_t)ch * frames; i++) {
            if (read_doubles(f, &v, 1))
                return -1;
            d[i] = (float)v;
        }
        win[e] = (weft_window){ d, frames, ch, 250, 0 };
    }
    char params[128];
    snprintf(params, sizeof params, "{ pairs: %s, shrinkage: %s }", pairs, shrink);
    weft_layout in = { .name = "x", .kind = WEFT_STREAM_SAMPLES, .channels = ch, .rate = 250,
                       .max_frames = 64 };
    static const char *const names[2] = { "a", "b" };
    weft_epochs ep = { .n_epochs = n, .n_in = 1, .n_classes = 2, .classes = cls,
                       .class_names = names, .windows = win };
    stage_driver sd;
    diag d = { 0 };
    if (stage_driver_open(&sd, WEFT_PLUGIN_DIR "/csp.so", params, &in, 1, &d) ||
        stage_driver_fit(&sd, &ep, &d)) {
        fprintf(stderr, "error: %s\n", d.msg);
        return -1;
    }
    const weft_param *filters = weft_param_get(&sd.n->params.view, "filters");
    const weft_param *lambda = weft_param_get(&sd.n->params.view, "eigenvalues");
    for (uint32_t r = 0; r < filters->rows; r++)
        print_row("filter", filters->values + (size_t)r * filters->cols, filters->cols);
    print_row("eigenvalues", lambda->values, lambda->cols);
    stage_driver_close(&sd);
    free(data);
    free(cls);
    free(win);
    return 0;
}

int main(int argc, char **argv)
{
    if (argc < 3) {
        fprintf(stderr, "usage: fit_reference_tool lw|lda|csp FILE [ARGS]\n");
        return 2;
    }
    FILE *f = fopen(argv[2], "r");
    if (!f) {
        perror(argv[2]);
        return 2;
    }
    int rc = -1;
    if (!strcmp(argv[1], "lw"))
        rc = cmd_lw(f);
    else if (!strcmp(argv[1], "lda") && argc == 4)
        rc = cmd_lda(f, argv[3]);
    else if (!strcmp(argv[1], "csp") && argc == 5)
        rc = cmd_csp(f, argv[3], argv[4]);
    fclose(f);
    if (rc)
        fprintf(stderr, "fit_reference_tool %s: failed (bad input or arguments)\n", argv[1]);
    return rc ? 1 : 0;
}
