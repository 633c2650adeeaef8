/*
 * branchline — thin C glue between TypeScript and SuiteSparse KLU (compiled to WebAssembly).
 *
 * One handle holds one sparse pattern (CSC, 0-based, int32), its value array, the symbolic
 * analysis and the numeric factorisation. TypeScript writes values straight into the handle's
 * value array (wasm memory) and calls factor / refactor / solve. Every entry point returns a
 * status code (see BL_* below); nothing here prints or aborts.
 *
 * Real and complex handles share the layout; complex values are interleaved (re, im).
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <stdint.h>
#include "klu.h"
#include "bl_order.h"
#include "bl_common.h"  /* status codes (BL_*), the determinant helpers */

#define BL_ORDER_AMD 0
#define BL_ORDER_COLAMD 1
#define BL_ORDER_GIVEN 2
#define BL_ORDER_METIS 3

typedef struct {
    int n, nnz, is_complex, ordering, factored, singular;
    int *Ap, *Ai;
    double *Ax;          /* nnz (real) or 2*nnz (complex) */
    int *perm;           /* optional given column ordering (size n) */
    klu_common common;
    klu_symbolic *symbolic;
    klu_numeric *numeric;
    int bad_index;       /* index of the first non-finite value, or -1 */
} bl_handle;

/* ------------------------------------------------------------------------------------------ */
/* Nested-dissection ordering for one diagonal block, through METIS_NodeND on pattern(A + A')  */
/* (bl_order.c). Called by KLU (ordering 3). Returns a positive number, or 0 on failure.       */
/* ------------------------------------------------------------------------------------------ */
static int bl_metis_order(int n, int *Cp, int *Ci, int *Perm, klu_common *Common) {
    (void)Common;
    return bl_metis_nd(n, Cp, Ci, Perm, 0);
}

/* ------------------------------------------------------------------------------------------ */
/* handles                                                                                     */
/* ------------------------------------------------------------------------------------------ */
bl_handle *bl_create(int n, int nnz, int is_complex) {
    if (n < 0 || nnz < 0) return NULL;
    bl_handle *h = (bl_handle *)calloc(1, sizeof(bl_handle));
    if (!h) return NULL;
    h->n = n; h->nnz = nnz; h->is_complex = is_complex ? 1 : 0; h->bad_index = -1;
    h->Ap = (int *)malloc(sizeof(int) * (size_t)(n + 1));
    h->Ai = (int *)malloc(sizeof(int) * (size_t)(nnz > 0 ? nnz : 1));
    h->Ax = (double *)calloc((size_t)(nnz > 0 ? nnz : 1) * (h->is_complex ? 2 : 1), sizeof(double));
    h->perm = (int *)malloc(sizeof(int) * (size_t)(n > 0 ? n : 1));
    if (!h->Ap || !h->Ai || !h->Ax || !h->perm) {
        free(h->Ap); free(h->Ai); free(h->Ax); free(h->perm); free(h); return NULL;
    }
    klu_defaults(&h->common); /* halt_if_singular stays TRUE: a zero pivot stops the factorisation */
    return h;
}

int *bl_colptr(bl_handle *h) { return h->Ap; }
int *bl_rowind(bl_handle *h) { return h->Ai; }
double *bl_values(bl_handle *h) { return h->Ax; }
int *bl_perm(bl_handle *h) { return h->perm; }

static void bl_free_numeric(bl_handle *h) {
    if (h->numeric) {
        if (h->is_complex) klu_z_free_numeric(&h->numeric, &h->common);
        else klu_free_numeric(&h->numeric, &h->common);
    }
    h->numeric = NULL; h->factored = 0; h->singular = 0;
}

void bl_destroy(bl_handle *h) {
    if (!h) return;
    bl_free_numeric(h);
    if (h->symbolic) klu_free_symbolic(&h->symbolic, &h->common);
    free(h->Ap); free(h->Ai); free(h->Ax); free(h->perm);
    free(h);
}

/* Options: btf (0/1), scale (-1 none, 0 none, 1 sum, 2 max), pivot tolerance. */
void bl_set_options(bl_handle *h, int btf, int scale, double tol) {
    h->common.btf = btf;
    h->common.scale = scale;
    if (tol > 0 && tol <= 1) h->common.tol = tol;
}

/* Analyse the pattern written into Ap/Ai; ordering is one of BL_ORDER_*. */
int bl_analyze(bl_handle *h, int ordering) {
    bl_free_numeric(h);
    if (h->symbolic) klu_free_symbolic(&h->symbolic, &h->common);
    /* validate the pattern: monotone column pointers, rows in range */
    if (h->Ap[0] != 0 || h->Ap[h->n] != h->nnz) return BL_INVALID;
    for (int j = 0; j < h->n; j++) {
        if (h->Ap[j] > h->Ap[j + 1]) return BL_INVALID;
        for (int p = h->Ap[j]; p < h->Ap[j + 1]; p++)
            if (h->Ai[p] < 0 || h->Ai[p] >= h->n) return BL_INVALID;
    }
    h->ordering = ordering;
    if (ordering == BL_ORDER_GIVEN) {
        h->common.ordering = 2;
        h->symbolic = klu_analyze_given(h->n, h->Ap, h->Ai, h->perm, h->perm, &h->common);
    } else {
        if (ordering == BL_ORDER_METIS) {
            h->common.ordering = 3;
            h->common.user_order = bl_metis_order;
        } else if (ordering == BL_ORDER_COLAMD) {
            h->common.ordering = 1;
        } else if (ordering == BL_ORDER_AMD) {
            h->common.ordering = 0;
        } else {
            return BL_INVALID;
        }
        h->symbolic = klu_analyze(h->n, h->Ap, h->Ai, &h->common);
    }
    if (!h->symbolic) {
        if (h->common.status == KLU_OUT_OF_MEMORY) return BL_OUT_OF_MEMORY;
        if (ordering == BL_ORDER_METIS) return BL_ORDERING_FAILED;
        return BL_INVALID;
    }
    return BL_OK;
}

static int bl_check_finite(bl_handle *h) {
    int m = h->nnz * (h->is_complex ? 2 : 1);
    for (int k = 0; k < m; k++)
        if (!isfinite(h->Ax[k])) { h->bad_index = h->is_complex ? k / 2 : k; return 0; }
    h->bad_index = -1;
    return 1;
}

static int bl_after_numeric(bl_handle *h) {
    int status = h->common.status;
    if (status == KLU_SINGULAR) {
        /* KLU freed the partial factors; the matrix is singular (determinant zero) */
        if (h->numeric) bl_free_numeric(h);
        h->numeric = NULL; h->factored = 0; h->singular = 1;
        return BL_SINGULAR;
    }
    if (status == KLU_OUT_OF_MEMORY) { bl_free_numeric(h); return BL_OUT_OF_MEMORY; }
    if (status < 0 || !h->numeric) { bl_free_numeric(h); return BL_INVALID; }
    h->factored = 1;
    h->singular = 0;
    {
        /* a finite matrix can still overflow to a non-finite pivot */
        int n = h->n;
        if (h->is_complex) {
            double *d = (double *)h->numeric->Udiag;
            for (int k = 0; k < 2 * n; k++) if (!isfinite(d[k])) { h->factored = 0; return BL_NONFINITE; }
        } else {
            double *d = (double *)h->numeric->Udiag;
            for (int k = 0; k < n; k++) if (!isfinite(d[k])) { h->factored = 0; return BL_NONFINITE; }
        }
    }
    return BL_OK;
}

/* Fresh numeric factorisation (new pivots). */
int bl_factor(bl_handle *h) {
    if (!h->symbolic) return BL_NOT_FACTORED;
    bl_free_numeric(h);
    if (!bl_check_finite(h)) return BL_NONFINITE;
    if (h->is_complex) h->numeric = klu_z_factor(h->Ap, h->Ai, h->Ax, h->symbolic, &h->common);
    else h->numeric = klu_factor(h->Ap, h->Ai, h->Ax, h->symbolic, &h->common);
    return bl_after_numeric(h);
}

/* Numeric refactorisation with the pivots of the last factor (same pattern). */
int bl_refactor(bl_handle *h) {
    if (!h->symbolic || !h->numeric) return BL_NOT_FACTORED;
    if (!bl_check_finite(h)) { h->factored = 0; return BL_NONFINITE; }
    int ok;
    if (h->is_complex) ok = klu_z_refactor(h->Ap, h->Ai, h->Ax, h->symbolic, h->numeric, &h->common);
    else ok = klu_refactor(h->Ap, h->Ai, h->Ax, h->symbolic, h->numeric, &h->common);
    (void)ok;
    int status = h->common.status;
    if (status == KLU_OUT_OF_MEMORY) return BL_OUT_OF_MEMORY;
    if (status < 0) { h->factored = 0; return BL_INVALID; }
    if (status == KLU_SINGULAR) {
        /* the factors are only partly defined now; a later refactor or factor overwrites them */
        h->factored = 0; h->singular = 1;
        return BL_SINGULAR;
    }
    h->factored = 1;
    h->singular = 0;
    double *d = (double *)h->numeric->Udiag;
    int m = h->n * (h->is_complex ? 2 : 1);
    for (int k = 0; k < m; k++) if (!isfinite(d[k])) { h->factored = 0; return BL_NONFINITE; }
    return BL_OK;
}

int bl_bad_index(bl_handle *h) { return h->bad_index; }
int bl_singular_col(bl_handle *h) { return h->common.singular_col; }
int bl_structural_rank(bl_handle *h) { return h->common.structural_rank; }
int bl_nblocks(bl_handle *h) { return h->symbolic ? h->symbolic->nblocks : 0; }
int bl_noffdiag(bl_handle *h) { return h->common.noffdiag; }

/* Factor sizes: nnz(L) and nnz(U) including diagonals, and the off-block entries. */
double bl_lnz(bl_handle *h) { return h->numeric ? (double)h->numeric->lnz : -1; }
double bl_unz(bl_handle *h) { return h->numeric ? (double)h->numeric->unz : -1; }
double bl_nzoff(bl_handle *h) { return h->numeric ? (double)h->numeric->nzoff : -1; }
double bl_symbolic_lnz(bl_handle *h) { return h->symbolic ? h->symbolic->lnz : -1; }
double bl_symbolic_unz(bl_handle *h) { return h->symbolic ? h->symbolic->unz : -1; }

/* Reciprocal pivot growth (small values mean the factorisation lost accuracy). */
double bl_rgrowth(bl_handle *h) {
    if (!h->factored) return -1;
    int ok = h->is_complex
        ? klu_z_rgrowth(h->Ap, h->Ai, h->Ax, h->symbolic, h->numeric, &h->common)
        : klu_rgrowth(h->Ap, h->Ai, h->Ax, h->symbolic, h->numeric, &h->common);
    return ok ? h->common.rgrowth : -1;
}

/* Cheap reciprocal condition estimate: min |U(k,k)| / max |U(k,k)|. */
double bl_rcond(bl_handle *h) {
    if (!h->factored) return -1;
    int ok = h->is_complex ? klu_z_rcond(h->symbolic, h->numeric, &h->common)
                           : klu_rcond(h->symbolic, h->numeric, &h->common);
    return ok ? h->common.rcond : -1;
}

/* 1-norm condition number estimate (Hager/Higham); costs a few solves. */
double bl_condest(bl_handle *h) {
    if (!h->factored || h->singular) return INFINITY;
    int ok = h->is_complex ? klu_z_condest(h->Ap, h->Ax, h->symbolic, h->numeric, &h->common)
                           : klu_condest(h->Ap, h->Ax, h->symbolic, h->numeric, &h->common);
    return ok ? h->common.condest : -1;
}

/* Solve A X = B in place, B column-major n-by-nrhs (interleaved complex for complex handles). */
int bl_solve(bl_handle *h, double *B, int nrhs) {
    if (!h->factored) return BL_NOT_FACTORED;
    if (h->singular) return BL_SINGULAR;
    int ok = h->is_complex ? klu_z_solve(h->symbolic, h->numeric, h->n, nrhs, B, &h->common)
                           : klu_solve(h->symbolic, h->numeric, h->n, nrhs, B, &h->common);
    return ok ? BL_OK : BL_INVALID;
}

/* Solve A^T X = B (conjugate: A^H X = B when conj is 1, complex only). */
int bl_tsolve(bl_handle *h, double *B, int nrhs, int conj) {
    if (!h->factored) return BL_NOT_FACTORED;
    if (h->singular) return BL_SINGULAR;
    int ok = h->is_complex ? klu_z_tsolve(h->symbolic, h->numeric, h->n, nrhs, B, conj, &h->common)
                           : klu_tsolve(h->symbolic, h->numeric, h->n, nrhs, B, &h->common);
    return ok ? BL_OK : BL_INVALID;
}

/*
 * Determinant of A from the factorisation P (R \ A) Q = L U (L unit lower triangular,
 * block triangular form included): det A = sign(P) sign(Q) prod(Rs) prod(diag U).
 * Writes out[0] = sign (+1, -1, or 0 when singular), out[1] = log |det A| (natural log).
 * For complex handles out[0..1] = unit phase (re, im) and out[2] = log |det A|.
 */
int bl_logdet(bl_handle *h, double *out) {
    if (h->singular) {
        out[0] = 0; out[1] = h->is_complex ? 0 : -INFINITY; out[2] = -INFINITY;
        return BL_OK;
    }
    if (!h->factored) return BL_NOT_FACTORED;
    int n = h->n;
    unsigned char *seen = (unsigned char *)malloc((size_t)(n > 0 ? n : 1));
    if (!seen) return BL_OUT_OF_MEMORY;
    int parity = bl_perm_parity(h->numeric->Pnum, n, seen) ^ bl_perm_parity(h->symbolic->Q, n, seen);
    free(seen);
    double logabs = 0;
    const double *Rs = h->numeric->Rs;
    if (Rs) for (int k = 0; k < n; k++) logabs += log(Rs[k]); /* row scale factors are > 0 */
    bl_det_from_diagonal((const double *)h->numeric->Udiag, n, h->is_complex, parity, logabs, out);
    return BL_OK;
}

/* Plain allocation helpers for the TypeScript side (work arrays in wasm memory). */
void *bl_malloc(int bytes) { return malloc((size_t)(bytes > 0 ? bytes : 1)); }
void bl_free(void *p) { free(p); }
