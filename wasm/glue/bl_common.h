/*
 * branchline — what the KLU glue (bl_klu.c) and the SuperLU glue (bl_superlu.c) share: the
 * status codes every entry point returns, and the determinant of A from a factorisation — the
 * parity of its permutations and U's diagonal (the scale factors' part is each glue's own).
 */
#ifndef BL_COMMON_H
#define BL_COMMON_H

#include <math.h>
#include <string.h>

#define BL_OK 0
#define BL_SINGULAR 1          /* factorisation completed with an exactly zero pivot */
#define BL_NONFINITE 2         /* a matrix value (or a pivot) is NaN or infinite */
#define BL_OUT_OF_MEMORY -1
#define BL_INVALID -2
#define BL_NOT_FACTORED -3
#define BL_ORDERING_FAILED -4

/* Parity of a permutation of 0..n-1: (n - number of cycles) mod 2; `seen` is n bytes of scratch. */
static inline int bl_perm_parity(const int *P, int n, unsigned char *seen) {
    memset(seen, 0, (size_t)n);
    int swaps = 0;
    for (int k = 0; k < n; k++) {
        if (seen[k]) continue;
        int len = 0, j = k;
        while (!seen[j]) { seen[j] = 1; j = P[j]; len++; }
        swaps += len - 1;
    }
    return swaps & 1;
}

/*
 * The determinant from U's diagonal d (n real, or n interleaved complex values), the parity of
 * the permutations and `logabs`, the log of the scale factors' part of |det A|. Writes
 * out[0] = sign (+1, -1, or 0 when singular), out[1] = log |det A| (natural log); complex:
 * out[0..1] = unit phase (re, im), out[2] = log |det A|.
 */
static inline void bl_det_from_diagonal(const double *d, int n, int is_complex, int parity, double logabs, double *out) {
    if (!is_complex) {
        int neg = parity;
        for (int k = 0; k < n; k++) {
            double v = d[k];
            if (v == 0) { out[0] = 0; out[1] = -INFINITY; return; }
            if (v < 0) neg ^= 1;
            logabs += log(fabs(v));
        }
        out[0] = neg ? -1 : 1;
        out[1] = logabs;
    } else {
        double pr = parity ? -1 : 1, pi = 0;
        for (int k = 0; k < n; k++) {
            double re = d[2 * k], im = d[2 * k + 1];
            double a = hypot(re, im);
            if (a == 0) { out[0] = 0; out[1] = 0; out[2] = -INFINITY; return; }
            re /= a; im /= a;
            double nr = pr * re - pi * im, ni = pr * im + pi * re;
            double s = hypot(nr, ni); /* renormalise against drift */
            pr = nr / s; pi = ni / s;
            logabs += log(a);
        }
        out[0] = pr; out[1] = pi; out[2] = logabs;
    }
}

#endif
