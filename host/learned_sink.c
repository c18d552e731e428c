/* learned_sink: fit's writes, checked against the declared parameters. */
#include "learned_sink.h"

#include <stdio.h>

static int note(learned_sink *ls, const char *name, int rc)
{
    if (rc == 0)
        ls->written++;
    else if (!ls->bad_name[0])
        snprintf(ls->bad_name, sizeof ls->bad_name, "%s", name);
    return rc == 0 ? WEFT_OK : WEFT_EINVAL;
}

static int put_number(void *ctx, const char *name, double v)
{
    learned_sink *ls = ctx;
    return note(ls, name, param_set_number(ls->ps, name, v));
}

static int put_numbers(void *ctx, const char *name, const double *v, uint32_t n)
{
    learned_sink *ls = ctx;
    return note(ls, name, param_set_numbers(ls->ps, name, v, 1, n, 0));
}

static int put_matrix(void *ctx, const char *name, const double *v, uint32_t rows,
                      uint32_t cols)
{
    learned_sink *ls = ctx;
    return note(ls, name, param_set_numbers(ls->ps, name, v, rows, cols, 1));
}

static int put_strings(void *ctx, const char *name, const char *const *v, uint32_t n)
{
    learned_sink *ls = ctx;
    return note(ls, name, param_set_strings(ls->ps, name, v, n));
}

void learned_sink_bind(learned_sink *ls, param_set *ps)
{
    *ls = (learned_sink){
        .sink = { .ctx = ls, .number = put_number, .numbers = put_numbers,
                  .matrix = put_matrix, .strings = put_strings },
        .ps = ps,
    };
}
