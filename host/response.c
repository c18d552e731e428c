/* response: impulse response through a chain of filter stages, and its spectrum.
 *
 * Group delay is the phase derivative, -d(phase)/d(omega), computed exactly without
 * unwrapping by the DTFT's differentiation property: with H the transform of h[n] and Hn that
 * of n h[n], group delay = Re(Hn / H) (Oppenheim and Schafer, Discrete-Time Signal Processing,
 * 2010, sec. 5.1, from memory). */
#include "response.h"

#include <fftw3.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* Nodes from first to last, following each node's first input back from last. */
static int chain_of(pipeline *pl, unsigned first, unsigned last, unsigned *chain, unsigned *n,
                    diag *d)
{
    unsigned at = last, count = 0;
    for (;;) {
        node *nd = &pl->nodes[at];
        if (nd->role != WEFT_ROLE_FILTER)
            return diag_set(d, "stage '%s' is a %s; a response is measured through filters "
                            "only", nd->def->name, role_name(nd->role));
        chain[count++] = at;
        if (at == first)
            break;
        if (count == pl->n || nd->n_in == 0 ||
            pl->nodes[nd->in_node[0]].role != WEFT_ROLE_FILTER)
            return diag_set(d, "stage '%s' is not upstream of '%s' through filters (each "
                            "stage's first input is followed)", pl->nodes[first].def->name,
                            pl->nodes[last].def->name);
        at = nd->in_node[0];
    }
    for (unsigned i = 0; i < count / 2; i++) { /* first .. last */
        unsigned t = chain[i];
        chain[i] = chain[count - 1 - i];
        chain[count - 1 - i] = t;
    }
    *n = count;
    return 0;
}

/* One block through one filter node, as the run loop does it (without markers). */
static int run_node(node *n, const weft_block *in, diag *d)
{
    weft_block *b = &n->out_block;
    *b = (weft_block){ .data = n->out_data, .capacity = n->out.max_frames,
                       .channels = n->out.channels, .first_index = n->produced,
                       .markers = n->out_markers, .marker_capacity = NODE_MARKERS_MAX };
    if (n->api->process(n->self, in, 1, b) < 0)
        return node_fail(n, d, "failed in process");
    if (b->frames > b->capacity)
        return diag_set(d, "stage '%s' produced %u frames into room for %u", n->def->name,
                        b->frames, b->capacity);
    n->produced += b->frames;
    return 0;
}

/* Collect `length` samples of the last node's first channel after an impulse into the
 * first node's first channel. */
static int drive(pipeline *pl, const unsigned *chain, unsigned n_chain, float *out,
                 size_t length, diag *d)
{
    node *head = &pl->nodes[chain[0]];
    const weft_layout *lin = &head->in_layouts[0];
    uint32_t block = lin->max_frames ? lin->max_frames : 1;
    float *x = calloc((size_t)block * lin->channels, sizeof *x);
    if (!x)
        return diag_set(d, "out of memory");
    size_t got = 0;
    uint64_t fed = 0;
    int rc = 0;
    /* Inputs keep coming (zeros after the impulse) until the output has `length` samples; a
     * resampler may take a while to answer, so feed at most 64x as many as wanted. */
    while (rc == 0 && got < length) {
        if (fed > 64 * (uint64_t)length + 1024 * (uint64_t)block) {
            rc = diag_set(d, "the chain produced %zu of %zu samples", got, length);
            break;
        }
        memset(x, 0, (size_t)block * lin->channels * sizeof *x);
        if (fed == 0)
            x[0] = 1.0f;
        weft_block in = { .data = x, .frames = block, .capacity = block,
                          .channels = lin->channels, .first_index = fed };
        fed += block;
        const weft_block *cur = &in;
        for (unsigned k = 0; rc == 0 && k < n_chain; k++) {
            node *nd = &pl->nodes[chain[k]];
            rc = run_node(nd, cur, d);
            cur = &nd->out_block;
        }
        for (uint32_t f = 0; rc == 0 && f < cur->frames && got < length; f++)
            out[got++] = cur->data[(size_t)f * cur->channels];
    }
    free(x);
    return rc;
}

static int spectrum(response *r)
{
    const size_t L = r->length, bins = L / 2 + 1;
    float *in = fftwf_alloc_real(L);
    fftwf_complex *h = fftwf_alloc_complex(bins), *hn = fftwf_alloc_complex(bins);
    fftwf_plan p = in && h && hn ? fftwf_plan_dft_r2c_1d((int)L, in, h, FFTW_ESTIMATE) : NULL;
    int rc = p ? 0 : -1;
    if (rc == 0) {
        memcpy(in, r->impulse, L * sizeof *in);
        fftwf_execute(p);
        for (size_t i = 0; i < L; i++)
            in[i] = r->impulse[i] * (float)i;
        fftwf_execute_dft_r2c(p, in, hn);
        double scale = r->in_rate / r->out_rate;
        for (size_t k = 0; k < bins; k++) {
            double re = h[k][0], im = h[k][1], m2 = re * re + im * im;
            r->magnitude[k] = sqrt(m2) * scale;
            r->phase[k] = atan2(im, re);
            /* Re(Hn / H) = Re(Hn conj(H)) / |H|^2 */
            r->delay[k] = m2 > 0 ? (hn[k][0] * re + hn[k][1] * im) / m2 : NAN;
        }
    }
    if (p)
        fftwf_destroy_plan(p);
    fftwf_free(in);
    fftwf_free(h);
    fftwf_free(hn);
    return rc;
}

int response_measure(pipeline *pl, unsigned first, unsigned last, size_t length, response *r,
                     diag *d)
{
    memset(r, 0, sizeof *r);
    unsigned *chain = calloc(pl->n, sizeof *chain), n_chain = 0;
    if (!chain)
        return diag_set(d, "out of memory");
    int rc = chain_of(pl, first, last, chain, &n_chain, d);
    r->length = length;
    r->bins = length / 2 + 1;
    r->in_rate = pl->nodes[first].in_layouts[0].rate;
    r->out_rate = pl->nodes[last].out.rate;
    r->impulse = calloc(length, sizeof *r->impulse);
    r->magnitude = calloc(r->bins, sizeof *r->magnitude);
    r->phase = calloc(r->bins, sizeof *r->phase);
    r->delay = calloc(r->bins, sizeof *r->delay);
    if (rc == 0 && (!r->impulse || !r->magnitude || !r->phase || !r->delay))
        rc = diag_set(d, "out of memory for a %zu-sample response", length);
    if (rc == 0)
        rc = drive(pl, chain, n_chain, r->impulse, length, d);
    if (rc == 0 && spectrum(r))
        rc = diag_set(d, "FFTW could not plan a %zu-point transform", length);
    if (rc == 0) {
        double total = 0, tail = 0;
        for (size_t i = 0; i < length; i++) {
            double e = (double)r->impulse[i] * r->impulse[i];
            total += e;
            if (i >= length - length / 10)
                tail += e;
        }
        r->tail_energy = total > 0 ? tail / total : 0;
    }
    free(chain);
    if (rc)
        response_free(r);
    return rc;
}

void response_free(response *r)
{
    free(r->impulse);
    free(r->magnitude);
    free(r->phase);
    free(r->delay);
    memset(r, 0, sizeof *r);
}

void response_at(const response *r, double f, double *magnitude, double *phase, double *delay)
{
    double pos = f / (r->out_rate / 2) * (double)(r->bins - 1);
    if (pos < 0)
        pos = 0;
    if (pos > (double)(r->bins - 1))
        pos = (double)(r->bins - 1);
    size_t k = (size_t)pos;
    size_t k1 = k + 1 < r->bins ? k + 1 : k;
    double t = pos - (double)k;
    *magnitude = r->magnitude[k] * (1 - t) + r->magnitude[k1] * t;
    *phase = t < 0.5 ? r->phase[k] : r->phase[k1];
    double d0 = r->delay[k], d1 = r->delay[k1];
    *delay = isnan(d0) ? d1 : isnan(d1) ? d0 : d0 * (1 - t) + d1 * t;
}
