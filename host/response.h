/* response: the frequency response of one filter stage, or of a chain of them, measured from
 * the impulse response: the stages are driven with a unit impulse on their first input channel
 * and their output's first channel is transformed (FFTW). Works for any filter plugin. */
#ifndef WEFT_RESPONSE_H
#define WEFT_RESPONSE_H

#include <stddef.h>

#include "pipeline.h"

typedef struct response {
    double in_rate, out_rate;
    size_t length;              /* samples of impulse response measured */
    float *impulse;             /* the impulse response, `length` samples at out_rate */
    size_t bins;                /* length / 2 + 1 frequencies, 0 .. out_rate / 2 */
    double *magnitude;          /* |H|, scaled by in_rate / out_rate for a rate change */
    double *phase;              /* radians, in (-pi, pi] */
    double *delay;              /* group delay, output samples */
    double tail_energy;         /* fraction of the energy in the last tenth: > 1e-6 means the
                                 * response had not died out and the low end is approximate */
} response;

/* Drive the stages from `first` to `last` (last fed, input by input, from first) with an
 * impulse of `length` samples (a power of two) and compute the response. d names the stage
 * that is not a filter or not on the chain. */
int response_measure(pipeline *pl, unsigned first, unsigned last, size_t length, response *r,
                     diag *d);
void response_free(response *r);

/* Values at frequency f (Hz), from the nearest bins by linear interpolation (the phase of the
 * nearer bin). */
void response_at(const response *r, double f, double *magnitude, double *phase,
                 double *delay);

#endif
