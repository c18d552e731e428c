/* latency: a fixed-size histogram of per-round processing times, allocated before the run so
 * recording a sample costs one increment. */
#ifndef WEFT_LATENCY_H
#define WEFT_LATENCY_H

#include <stdint.h>

#define LATENCY_BUCKETS 20000   /* 1 us each: 0 .. 19.999 ms, then one overflow bucket */

typedef struct latency {
    uint32_t *counts;           /* LATENCY_BUCKETS + 1 */
    uint64_t n;
    double max_us;
} latency;

int latency_init(latency *l);
void latency_free(latency *l);
void latency_add(latency *l, double us);
/* The q-quantile (0..1) in microseconds, to the bucket's resolution; 0 if empty. */
double latency_quantile(const latency *l, double q);

#endif
