/* butter_design: Butterworth analog prototype -> band transformation -> bilinear transform ->
 * second-order sections, all in zeros, poles and gain, so no polynomial of high degree is ever
 * formed (its roots would be lost to rounding for low cutoffs).
 *
 * Sources: Butterworth (1930), "On the theory of filter amplifiers", poles on the unit circle;
 * the low-pass to high-pass / band-pass / band-stop substitutions s -> w0/s,
 * s -> (s^2 + w0^2) / (B s), s -> B s / (s^2 + w0^2) and the bilinear transform with frequency
 * prewarping, Oppenheim and Schafer, Discrete-Time Signal Processing (3rd ed., 2010),
 * section 7.2 (from memory). The root bookkeeping follows scipy.signal.iirfilter, so the
 * sections can be compared with scipy.signal.butter(..., output='sos') coefficient by
 * coefficient (tests/reference/check_filters_butterworth.py). */
#include "butter_design.h"

#include <math.h>

#include "zpk.h"

#define PI 3.14159265358979323846

int butter_sections(butter_kind kind, int order)
{
    if (kind == BUTTER_BANDPASS || kind == BUTTER_BANDSTOP)
        return order;
    return (order + 1) / 2;
}

/* Analog prototype: N poles evenly spaced on the left half of the unit circle, no zeros. */
static void prototype(int order, zpk *f)
{
    f->nz = 0;
    f->np = order;
    f->k = 1;
    for (int i = 0; i < order; i++) {
        int m = -order + 1 + 2 * i;
        f->p[i] = -cexp(I * (PI * m / (2.0 * order)));
    }
}

static double complex prod_neg(const double complex *x, int n)
{
    double complex r = 1;
    for (int i = 0; i < n; i++)
        r *= -x[i];
    return r;
}

static void to_lowpass(zpk *f, double w0)
{
    int degree = f->np - f->nz;
    for (int i = 0; i < f->nz; i++)
        f->z[i] *= w0;
    for (int i = 0; i < f->np; i++)
        f->p[i] *= w0;
    f->k *= pow(w0, degree);
}

static void to_highpass(zpk *f, double w0)
{
    int degree = f->np - f->nz;
    f->k *= creal(prod_neg(f->z, f->nz) / prod_neg(f->p, f->np));
    for (int i = 0; i < f->nz; i++)
        f->z[i] = w0 / f->z[i];
    for (int i = 0; i < f->np; i++)
        f->p[i] = w0 / f->p[i];
    for (int i = 0; i < degree; i++)
        f->z[f->nz++] = 0;
}

/* Each root r of the low-pass becomes the two roots of s^2 - r B s + w0^2 (B = bandwidth). */
static void split_band(double complex *x, int n, double complex scaled[], double w0)
{
    for (int i = 0; i < n; i++) {
        double complex r = scaled[i];
        double complex d = csqrt(r * r - w0 * w0);
        x[i] = r + d;
        x[n + i] = r - d;
    }
}

static void to_bandpass(zpk *f, double w0, double bw)
{
    int degree = f->np - f->nz;
    double complex zs[ZPK_MAX], ps[ZPK_MAX];
    for (int i = 0; i < f->nz; i++)
        zs[i] = f->z[i] * bw / 2;
    for (int i = 0; i < f->np; i++)
        ps[i] = f->p[i] * bw / 2;
    split_band(f->z, f->nz, zs, w0);
    split_band(f->p, f->np, ps, w0);
    f->nz *= 2;
    f->np *= 2;
    for (int i = 0; i < degree; i++)
        f->z[f->nz++] = 0;
    f->k *= pow(bw, degree);
}

static void to_bandstop(zpk *f, double w0, double bw)
{
    int degree = f->np - f->nz;
    double complex zs[ZPK_MAX], ps[ZPK_MAX];
    for (int i = 0; i < f->nz; i++)
        zs[i] = (bw / 2) / f->z[i];
    for (int i = 0; i < f->np; i++)
        ps[i] = (bw / 2) / f->p[i];
    f->k *= creal(prod_neg(f->z, f->nz) / prod_neg(f->p, f->np));
    split_band(f->z, f->nz, zs, w0);
    split_band(f->p, f->np, ps, w0);
    f->nz *= 2;
    f->np *= 2;
    for (int i = 0; i < degree; i++)
        f->z[f->nz++] = I * w0;
    for (int i = 0; i < degree; i++)
        f->z[f->nz++] = -I * w0;
}

/* s -> 2 fs (z - 1) / (z + 1) with fs = 2 on frequencies normalised to half the rate; zeros at
 * infinity land on z = -1. */
static void bilinear(zpk *f)
{
    const double fs2 = 4.0;
    int degree = f->np - f->nz;
    double complex num = 1, den = 1;
    for (int i = 0; i < f->nz; i++)
        num *= fs2 - f->z[i];
    for (int i = 0; i < f->np; i++)
        den *= fs2 - f->p[i];
    for (int i = 0; i < f->nz; i++)
        f->z[i] = (fs2 + f->z[i]) / (fs2 - f->z[i]);
    for (int i = 0; i < f->np; i++)
        f->p[i] = (fs2 + f->p[i]) / (fs2 - f->p[i]);
    for (int i = 0; i < degree; i++)
        f->z[f->nz++] = -1;
    f->k *= creal(num / den);
}

int butter_design(butter_kind kind, int order, double rate, double f1, double f2,
                  sos_coef *out)
{
    int band = kind == BUTTER_BANDPASS || kind == BUTTER_BANDSTOP;
    if (order < 1 || order > BUTTER_MAX_ORDER || !(rate > 0) || !(f1 > 0) ||
        !(f1 < rate / 2) || (band && !(f2 > f1 && f2 < rate / 2)))
        return -1;
    /* Prewarp: the analog edge that the bilinear transform maps onto the wanted digital one,
     * with frequencies as fractions of half the rate (so fs = 2 in the transform). */
    double w1 = 4.0 * tan(PI * (2 * f1 / rate) / 2.0);
    double w2 = band ? 4.0 * tan(PI * (2 * f2 / rate) / 2.0) : 0;
    zpk f;
    prototype(order, &f);
    switch (kind) {
    case BUTTER_LOWPASS: to_lowpass(&f, w1); break;
    case BUTTER_HIGHPASS: to_highpass(&f, w1); break;
    case BUTTER_BANDPASS: to_bandpass(&f, sqrt(w1 * w2), w2 - w1); break;
    case BUTTER_BANDSTOP: to_bandstop(&f, sqrt(w1 * w2), w2 - w1); break;
    }
    bilinear(&f);
    return zpk_to_sos(&f, out, BUTTER_MAX_SECTIONS);
}
