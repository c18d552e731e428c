/* latency: histogram of processing times. */
#include "latency.h"

#include <stdlib.h>

int latency_init(latency *l)
{
    l->n = 0;
    l->max_us = 0;
    l->counts = calloc(LATENCY_BUCKETS + 1, sizeof *l->counts);
    return l->counts ? 0 : -1;
}

void latency_free(latency *l)
{
    free(l->counts);
    l->counts = NULL;
}

void latency_add(latency *l, double us)
{
    if (us < 0)
        us = 0;
    unsigned b = us >= LATENCY_BUCKETS ? LATENCY_BUCKETS : (unsigned)us;
    l->counts[b]++;
    l->n++;
    if (us > l->max_us)
        l->max_us = us;
}

double latency_quantile(const latency *l, double q)
{
    if (!l->n)
        return 0;
    uint64_t rank = (uint64_t)(q * (double)(l->n - 1)), seen = 0;
    for (unsigned b = 0; b <= LATENCY_BUCKETS; b++) {
        seen += l->counts[b];
        if (seen > rank)
            return b == LATENCY_BUCKETS ? l->max_us : b + 0.5;
    }
    return l->max_us;
}
