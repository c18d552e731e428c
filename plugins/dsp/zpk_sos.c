/* zpk_sos: zeros, poles and gain grouped into second-order sections by nearest pairing. */
#include "zpk.h"

#include <float.h>
#include <math.h>
#include <string.h>

/* Roots as one list: the representatives of conjugate pairs (imaginary part > 0) first, sorted
 * by real part, then the real roots in ascending order. A pair's partner is implied. */
typedef struct root_list {
    double complex v[ZPK_MAX];
    int real[ZPK_MAX];
    int n;
} root_list;

static void list_remove(root_list *l, int i)
{
    memmove(&l->v[i], &l->v[i + 1], (size_t)(l->n - i - 1) * sizeof l->v[0]);
    memmove(&l->real[i], &l->real[i + 1], (size_t)(l->n - i - 1) * sizeof l->real[0]);
    l->n--;
}

static int before(double complex a, double complex b)
{
    if (creal(a) != creal(b))
        return creal(a) < creal(b);
    return fabs(cimag(a)) < fabs(cimag(b));
}

/* Stable insertion sort by (real part, |imaginary part|); n is at most ZPK_MAX. */
static void sort_roots(double complex *x, int n, int by_imag_only)
{
    for (int i = 1; i < n; i++) {
        double complex key = x[i];
        int j = i - 1;
        while (j >= 0 && (by_imag_only ? fabs(cimag(key)) < fabs(cimag(x[j]))
                                       : before(key, x[j]))) {
            x[j + 1] = x[j];
            j--;
        }
        x[j + 1] = key;
    }
}

/* Split roots into conjugate pairs and reals. A root counts as real when its imaginary part is
 * below 100 machine epsilons of its magnitude; a pair's two members are averaged, which
 * removes the rounding that made them differ. Returns -1 if a complex root has no partner. */
static int split_roots(const double complex *in, int n, root_list *out)
{
    const double tol = 100 * DBL_EPSILON;
    double complex x[ZPK_MAX], up[ZPK_MAX], down[ZPK_MAX];
    double re[ZPK_MAX];
    int n_up = 0, n_down = 0, n_re = 0;
    memcpy(x, in, (size_t)n * sizeof x[0]);
    sort_roots(x, n, 0);
    for (int i = 0; i < n; i++) {
        if (fabs(cimag(x[i])) <= tol * cabs(x[i]))
            re[n_re++] = creal(x[i]);
        else if (cimag(x[i]) > 0)
            up[n_up++] = x[i];
        else
            down[n_down++] = x[i];
    }
    if (n_up != n_down)
        return -1;
    /* Pairs whose real parts agree within the tolerance are matched by imaginary part. */
    for (int start = 0; start < n_up;) {
        int stop = start + 1;
        while (stop < n_up && creal(up[stop]) - creal(up[stop - 1]) <= tol * cabs(up[stop - 1]))
            stop++;
        sort_roots(up + start, stop - start, 1);
        sort_roots(down + start, stop - start, 1);
        start = stop;
    }
    out->n = 0;
    for (int i = 0; i < n_up; i++) {
        if (cabs(up[i] - conj(down[i])) > tol * cabs(down[i]))
            return -1;
        out->v[out->n] = (up[i] + conj(down[i])) / 2;
        out->real[out->n++] = 0;
    }
    for (int i = 0; i < n_re; i++) {
        out->v[out->n] = re[i];
        out->real[out->n++] = 1;
    }
    return 0;
}

/* The root nearest the unit circle (among reals only, if asked); the first one on ties. */
static int worst_index(const root_list *l, int reals_only)
{
    int best = -1;
    double best_d = INFINITY;
    for (int i = 0; i < l->n; i++) {
        if (reals_only && !l->real[i])
            continue;
        double d = fabs(1 - cabs(l->v[i]));
        if (d < best_d) {
            best_d = d;
            best = i;
        }
    }
    return best;
}

enum { ANY, REAL_ONLY, COMPLEX_ONLY };

static int nearest_index(const root_list *l, double complex to, int which)
{
    int best = -1;
    double best_d = INFINITY;
    for (int i = 0; i < l->n; i++) {
        if ((which == REAL_ONLY && !l->real[i]) || (which == COMPLEX_ONLY && l->real[i]))
            continue;
        double d = cabs(l->v[i] - to);
        if (d < best_d) {
            best_d = d;
            best = i;
        }
    }
    return best;
}

static int count_real(const root_list *l)
{
    int n = 0;
    for (int i = 0; i < l->n; i++)
        n += l->real[i];
    return n;
}

/* Polynomial with the given roots (0, 1 or 2 of them), right-aligned in c[0..2]: one root
 * gives 0 + z^-1 - r z^-2, as a delayed first-order term. A conjugate pair is given as its
 * representative with pair = 1. */
static void poly2(const double complex *r, int n, int pair, double c[3])
{
    if (pair) {
        c[0] = 1;
        c[1] = -(creal(r[0]) + creal(r[0]));
        c[2] = creal(r[0] * conj(r[0]));
    } else if (n == 2) {
        c[0] = 1;
        c[1] = -creal(r[1]) - creal(r[0]);
        c[2] = creal(r[0]) * creal(r[1]);
    } else if (n == 1) {
        c[0] = 0;
        c[1] = 1;
        c[2] = -creal(r[0]);
    } else {
        c[0] = 0;
        c[1] = 0;
        c[2] = 1;
    }
}

static sos_coef section_of(const double complex *z, int nz, int z_pair, const double complex *p,
                           int np, int p_pair)
{
    double b[3], a[3];
    poly2(z, nz, z_pair, b);
    poly2(p, np, p_pair, a);
    /* Sections are normalised to a0 = 1; every a built here already has it, as the poles of a
     * section are never fewer than one. */
    return (sos_coef){ b[0], b[1], b[2], a[1], a[2] };
}

/* Build one section around the pole nearest the unit circle; takes its roots off the lists. */
static sos_coef take_section(root_list *z, root_list *p)
{
    int i = worst_index(p, 0);
    double complex p1 = p->v[i];
    int p1_real = p->real[i];
    list_remove(p, i);
    double complex zs[2], ps[2] = { p1, 0 };

    if (p1_real && count_real(p) == 0) {
        /* The last real pole: a first-order section padded with a pole and zero at 0. */
        int j = nearest_index(z, p1, REAL_ONLY);
        zs[0] = j >= 0 ? z->v[j] : 0;
        zs[1] = 0;
        if (j >= 0)
            list_remove(z, j);
        return section_of(zs, 2, 0, ps, 2, 0);
    }
    if (p->n + 1 == z->n && !p1_real && count_real(p) == 1 && count_real(z) == 1) {
        /* One real pole and one real zero left for later: this pair must take complex zeros. */
        int j = nearest_index(z, p1, COMPLEX_ONLY);
        zs[0] = z->v[j];
        list_remove(z, j);
        return section_of(zs, 2, 1, ps, 2, 1);
    }
    if (p1_real) {
        int j = worst_index(p, 1);
        ps[1] = p->v[j];
        list_remove(p, j);
    }
    int np = 2, p_pair = !p1_real;
    if (z->n == 0)
        return section_of(zs, 0, 0, ps, np, p_pair);
    int j = nearest_index(z, p1, ANY);
    zs[0] = z->v[j];
    int z1_real = z->real[j];
    list_remove(z, j);
    if (!z1_real)
        return section_of(zs, 2, 1, ps, np, p_pair);
    if (z->n == 0)
        return section_of(zs, 1, 0, ps, np, p_pair);
    j = nearest_index(z, p1, REAL_ONLY);
    if (j < 0) /* cannot happen with real roots in even numbers, as zpk_to_sos makes them */
        return section_of(zs, 1, 0, ps, np, p_pair);
    zs[1] = z->v[j];
    list_remove(z, j);
    return section_of(zs, 2, 0, ps, np, p_pair);
}

int zpk_to_sos(const zpk *f, sos_coef *out, int max_sections)
{
    if (f->nz == 0 && f->np == 0) {
        if (max_sections < 1)
            return -1;
        out[0] = (sos_coef){ f->k, 0, 0, 0, 0 };
        return 1;
    }
    double complex z[ZPK_MAX], p[ZPK_MAX];
    int n = f->nz > f->np ? f->nz : f->np;
    int n_sections = (n + 1) / 2;
    if (n + 1 > ZPK_MAX || n_sections > max_sections)
        return -1;
    /* Equal numbers of poles and zeros, and an even count: pad with roots at the origin. */
    for (int i = 0; i < n; i++) {
        z[i] = i < f->nz ? f->z[i] : 0;
        p[i] = i < f->np ? f->p[i] : 0;
    }
    if (n % 2) {
        z[n] = 0;
        p[n] = 0;
        n++;
    }
    root_list zl, pl;
    if (split_roots(z, n, &zl) || split_roots(p, n, &pl))
        return -1;
    /* The sections nearest instability are built first and placed last. */
    for (int s = n_sections - 1; s >= 0; s--) {
        if (pl.n == 0)
            return -1;
        out[s] = take_section(&zl, &pl);
    }
    out[0].b0 *= f->k;
    out[0].b1 *= f->k;
    out[0].b2 *= f->k;
    return n_sections;
}
