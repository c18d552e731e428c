/* montage_grid: where a 10-10 electrode name sits on the naming grid -- rows from front to
 * back (Fp, AF, F, FC, C, CP, P, PO, O), columns from the midline (z = 0, odd numbers left,
 * even right) -- and which electrodes of a montage are its grid neighbours. */
#ifndef SPATIAL_MONTAGE_GRID_H
#define SPATIAL_MONTAGE_GRID_H

#include <stddef.h>
#include <stdint.h>

/* Row and column of a 10-10 name ("C3" -> row 4, column -2; "T7" -> 4, -4), case-insensitive.
 * Returns 0, or -1 if the name is not on the grid. */
int montage_grid_position(const char *name, int *row, int *column);

/* Indices of the labels adjacent to labels[channel] on the grid (front, back, left, right;
 * at most `max`). Returns how many; 0 if the channel is not on the grid. */
unsigned montage_grid_neighbours(const char *const *labels, uint32_t n, uint32_t channel,
                                 int *out, unsigned max);

/* ASCII case-insensitive comparison of the first len characters (locale-free). */
int strncasecmp_ascii(const char *a, const char *b, size_t len);

#endif
