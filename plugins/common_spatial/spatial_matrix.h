/* spatial_matrix: a C_out x C_in matrix applied to every frame of a block -- the streaming
 * half of every spatial filter (fixed matrix, common average, Laplacian, CSP). */
#ifndef COMMON_SPATIAL_MATRIX_H
#define COMMON_SPATIAL_MATRIX_H

#include <stdint.h>
#include <weft/stage.h>

typedef struct spatial_matrix {
    uint32_t rows, cols;        /* C_out, C_in */
    float *w;                   /* rows x cols, row-major */
} spatial_matrix;

/* Allocate a zero matrix (a stage not yet fitted passes zeros). Returns WEFT_OK or
 * WEFT_ENOMEM. Also keeps OpenBLAS on the calling thread: the run loop must not wait on a
 * thread pool (DESIGN: OpenBLAS single-threaded inside the loop). */
int spatial_matrix_init(spatial_matrix *m, uint32_t rows, uint32_t cols);
void spatial_matrix_free(spatial_matrix *m);

/* Copy rows x cols doubles (row-major) in. */
void spatial_matrix_set(spatial_matrix *m, const double *values);

/* out[frames x rows] = in[frames x cols] * W^T, one sgemm per block. No allocation. */
void spatial_matrix_apply(const spatial_matrix *m, const float *in, uint32_t frames, float *out);

#endif
