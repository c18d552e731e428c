/* spatial_matrix: per-block matrix product through OpenBLAS. */
#include "spatial_matrix.h"

#include <cblas.h>
#include <stdlib.h>

int spatial_matrix_init(spatial_matrix *m, uint32_t rows, uint32_t cols)
{
    m->rows = rows;
    m->cols = cols;
    m->w = calloc((size_t)rows * cols + 1, sizeof *m->w);
    openblas_set_num_threads(1);
    return m->w ? WEFT_OK : WEFT_ENOMEM;
}

void spatial_matrix_free(spatial_matrix *m)
{
    free(m->w);
    m->w = NULL;
}

void spatial_matrix_set(spatial_matrix *m, const double *values)
{
    for (size_t i = 0; i < (size_t)m->rows * m->cols; i++)
        m->w[i] = (float)values[i];
}

/* Interleaved frames are the rows of a frames x C_in matrix, so the whole block is one
 * product with W transposed. Each output frame depends only on its input frame, so any split
 * of the stream into blocks gives the same samples. */
void spatial_matrix_apply(const spatial_matrix *m, const float *in, uint32_t frames, float *out)
{
    if (frames == 0)
        return;
    cblas_sgemm(CblasRowMajor, CblasNoTrans, CblasTrans, (int)frames, (int)m->rows,
                (int)m->cols, 1.0f, in, (int)m->cols, m->w, (int)m->cols, 0.0f, out,
                (int)m->rows);
}
