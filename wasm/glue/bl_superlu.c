/*
 * branchline — thin C glue between TypeScript and SuperLU (supernodal sparse LU with partial
 * pivoting), compiled to WebAssembly. The same life cycle and status codes as the KLU glue
 * (bl_klu.c): one handle per sparse pattern (CSC, 0-based), analyse once (fill-reducing
 * ordering, column elimination tree), factor as often as needed, solve with many right-hand
 * sides, plain, transposed or conjugate-transposed, determinant sign and log-magnitude.
 *
 * What differs from KLU:
 *  - SuperLU factors afresh every time: its symbolic work is interleaved with the numeric work,
 *    so keeping the pivot order saves next to nothing. `refactor` is a fresh factorisation.
 *  - Rows are scaled here (As = diag(R) A, R from the row maxima or sums, as KLU does) and the
 *    scaling is undone in the solves and the determinant.
 *  - Orderings: METIS nested dissection or AMD on pattern(A + A'), both with SuperLU's
 *    symmetric mode (diagonal pivots preferred within the threshold), COLAMD on A'A (SuperLU's
 *    own copy, unsymmetric mode), or a given permutation (symmetric mode).
 *  - A failed allocation inside SuperLU (which would abort the process) longjmps back here and
 *    becomes an out-of-memory status; what SuperLU had allocated in that call is lost.
 *
 * Nothing here prints or exits.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include "bl_superlu.h"
#include "bl_order.h"
#include "amd.h"

#define BL_ORDER_AMD 0
#define BL_ORDER_COLAMD 1
#define BL_ORDER_GIVEN 2
#define BL_ORDER_METIS 3

jmp_buf bs_abort_jump;
int bs_abort_armed = 0;

void bs_abort(char *msg) {
    (void)msg;
    if (bs_abort_armed) longjmp(bs_abort_jump, 1);
    abort();
}

/*
 * SuperLU's tuning parameters (sp_ienv): 1 panel width, 2 relaxed-supernode size, 3 largest
 * supernode, 4 and 5 the row and column thresholds for 2-D blocking, 6 the first storage guess
 * in multiples of nnz(A) (set per handle from its previous factorisation).
 */
int bs_ienv[7] = {0, 10, 5, 100, 200, 40, 20}; /* SuperLU 3.0's own values (tuning them measured no difference) */

int sp_ienv(int ispec) { return ispec >= 1 && ispec <= 6 ? bs_ienv[ispec] : 0; }

int bs_fill_override = 0;

void bs_set_tuning(int ispec, int value) {
    if (ispec >= 1 && ispec <= 5 && value > 0) bs_ienv[ispec] = value;
    if (ispec == 6) bs_fill_override = value;
}

/*
 * Postorder of a forest given by parent[] (roots have parent n), as SuperLU's TreePostorder,
 * but without recursion: SuperLU 3.0's recursive depth-first search overflows the stack on
 * deep trees — the column elimination tree of a matrix with a dense row (a continuation border)
 * is a path through every column. (SuperLU 4 made the same change.) sp_coletree.c is compiled
 * with its own TreePostorder renamed away. Returns post[] with post[v] = postorder number of v.
 */
int *TreePostorder(int n, int *parent) {
    int *first_kid = (int *)superlu_malloc(sizeof(int) * (size_t)(n + 1));
    int *next_kid = (int *)superlu_malloc(sizeof(int) * (size_t)(n + 1));
    int *post = (int *)superlu_malloc(sizeof(int) * (size_t)(n + 1));
    if (!first_kid || !next_kid || !post) bs_abort("TreePostorder: out of memory");
    for (int v = 0; v <= n; v++) first_kid[v] = -1;
    next_kid[n] = -1;
    for (int v = n - 1; v >= 0; v--) {
        int dad = parent[v];
        next_kid[v] = first_kid[dad];
        first_kid[dad] = v;
    }
    /* depth-first from the dummy root n: descend to first kids, number on the way back up */
    int current = n, postnum = 0;
    for (;;) {
        while (first_kid[current] != -1) current = first_kid[current];
        post[current] = postnum++;
        while (current != n && next_kid[current] == -1) {
            current = parent[current];
            post[current] = postnum++;
        }
        if (current == n) break;
        current = next_kid[current];
    }
    superlu_free(first_kid);
    superlu_free(next_kid);
    return post;
}

/* The copy of SuperLU in Debian's getfem source asks this hook whether to cancel: never. */
int handle_getfem_callback(void) { return 0; }

/* SuperLU's error reporter for bad arguments: nothing to print; the caller sees the status. */
int xerbla_(char *name, int *info) { (void)name; (void)info; return 0; }

/* ------------------------------------------------------------------------------------------ */
/* handles                                                                                     */
/* ------------------------------------------------------------------------------------------ */
bs_handle *bs_create(int n, int nnz, int is_complex) {
    if (n < 0 || nnz < 0) return NULL;
    bs_handle *h = (bs_handle *)calloc(1, sizeof(bs_handle));
    if (!h) return NULL;
    int W = is_complex ? 2 : 1;
    size_t nn = (size_t)(n > 0 ? n : 1), mm = (size_t)(nnz > 0 ? nnz : 1);
    h->n = n; h->nnz = nnz; h->is_complex = is_complex ? 1 : 0;
    h->bad_index = -1; h->singular_col = -1;
    h->scale = 2; h->tol = 0.1; h->fill_hint = 20;
    h->Ap = (int *)malloc(sizeof(int) * (nn + 1));
    h->Ai = (int *)malloc(sizeof(int) * mm);
    h->Ax = (double *)calloc(mm * W, sizeof(double));
    h->As = (double *)calloc(mm * W, sizeof(double));
    h->R = (double *)malloc(sizeof(double) * nn);
    h->perm = (int *)malloc(sizeof(int) * nn);
    h->perm_c = (int *)malloc(sizeof(int) * nn);
    h->perm_r = (int *)malloc(sizeof(int) * nn);
    h->etree = (int *)malloc(sizeof(int) * nn);
    h->udiag = (double *)calloc(nn * W, sizeof(double));
    if (!h->Ap || !h->Ai || !h->Ax || !h->As || !h->R || !h->perm || !h->perm_c || !h->perm_r || !h->etree || !h->udiag) {
        free(h->Ap); free(h->Ai); free(h->Ax); free(h->As); free(h->R); free(h->perm);
        free(h->perm_c); free(h->perm_r); free(h->etree); free(h->udiag); free(h);
        return NULL;
    }
    return h;
}

int *bs_colptr(bs_handle *h) { return h->Ap; }
int *bs_rowind(bs_handle *h) { return h->Ai; }
double *bs_values(bs_handle *h) { return h->Ax; }
int *bs_perm(bs_handle *h) { return h->perm; }

static void free_lu(bs_handle *h) {
    if (h->has_lu) {
        Destroy_SuperNode_Matrix(&h->L);
        Destroy_CompCol_Matrix(&h->U);
    }
    h->has_lu = 0; h->factored = 0; h->singular = 0;
}

static void free_analysis(bs_handle *h) {
    free_lu(h);
    if (h->analysed) Destroy_CompCol_Permuted(&h->AC);
    h->analysed = 0;
}

void bs_destroy(bs_handle *h) {
    if (!h) return;
    free_analysis(h);
    free(h->Ap); free(h->Ai); free(h->Ax); free(h->As); free(h->R); free(h->perm);
    free(h->perm_c); free(h->perm_r); free(h->etree); free(h->udiag);
    free(h);
}

/* Options: scale (0 none, 1 sum, 2 max), diagonal pivot threshold in (0, 1]. */
void bs_set_options(bs_handle *h, int scale, double tol) {
    h->scale = scale >= 0 && scale <= 2 ? scale : 2;
    if (tol > 0 && tol <= 1) h->tol = tol;
}

/* Analyse the pattern written into Ap/Ai; ordering is one of BL_ORDER_*. */
int bs_analyze(bs_handle *h, int ordering) {
    free_analysis(h);
    int n = h->n;
    if (h->Ap[0] != 0 || h->Ap[n] != h->nnz) return BL_INVALID;
    for (int j = 0; j < n; j++) {
        if (h->Ap[j] > h->Ap[j + 1]) return BL_INVALID;
        for (int p = h->Ap[j]; p < h->Ap[j + 1]; p++)
            if (h->Ai[p] < 0 || h->Ai[p] >= n) return BL_INVALID;
    }
    /* the matrix SuperLU sees: the scaled values, the caller's pattern */
    h->Astore.nnz = h->nnz;
    h->Astore.nzval = h->As;
    h->Astore.rowind = h->Ai;
    h->Astore.colptr = h->Ap;
    h->A.Stype = SLU_NC;
    h->A.Dtype = h->is_complex ? SLU_Z : SLU_D;
    h->A.Mtype = SLU_GE;
    h->A.nrow = n;
    h->A.ncol = n;
    h->A.Store = &h->Astore;
    set_default_options(&h->options);
    h->options.Fact = DOFACT;
    h->options.DiagPivotThresh = h->tol;
    h->options.SymmetricMode = ordering == BL_ORDER_COLAMD ? NO : YES;
    if (n == 0) { h->analysed = 0; return BL_OK; }
    if (ordering == BL_ORDER_COLAMD) {
        h->options.ColPerm = COLAMD;
        get_perm_c(COLAMD, &h->A, h->perm_c);
    } else {
        h->options.ColPerm = MY_PERMC;
        if (ordering == BL_ORDER_METIS) {
            if (!bl_metis_nd(n, h->Ap, h->Ai, h->perm, 1)) return BL_ORDERING_FAILED;
        } else if (ordering == BL_ORDER_AMD) {
            int status = amd_order(n, h->Ap, h->Ai, h->perm, NULL, NULL);
            if (status == AMD_OUT_OF_MEMORY) return BL_OUT_OF_MEMORY;
            if (status != AMD_OK && status != AMD_OK_BUT_JUMBLED) return BL_INVALID;
        } else if (ordering != BL_ORDER_GIVEN) {
            return BL_INVALID;
        }
        /* SuperLU's perm_c maps an original column to its position */
        for (int k = 0; k < n; k++) h->perm_c[k] = -1;
        for (int k = 0; k < n; k++) {
            int j = h->perm[k];
            if (j < 0 || j >= n || h->perm_c[j] != -1) return BL_INVALID;
            h->perm_c[j] = k;
        }
    }
    bs_abort_armed = 1;
    if (setjmp(bs_abort_jump)) { bs_abort_armed = 0; return BL_OUT_OF_MEMORY; }
    sp_preorder(&h->options, &h->A, h->perm_c, h->etree, &h->AC);
    bs_abort_armed = 0;
    /* the final column order (sp_preorder post-orders it in unsymmetric mode), KLU's convention */
    for (int j = 0; j < n; j++) h->perm[h->perm_c[j]] = j;
    /* the predicted factor: for the automatic choice, and the first storage guess (SuperLU's L
       holds each supernode's diagonal block whole, hence the margin) */
    if (!bl_symbolic_counts(n, h->Ap, h->Ai, h->perm, h->predicted)) return BL_OUT_OF_MEMORY;
    int hint = (int)ceil(1.25 * h->predicted[0] / (h->nnz > 0 ? h->nnz : 1));
    h->fill_hint = hint < 4 ? 4 : hint;
    h->analysed = 1;
    return BL_OK;
}

/* Predicted nnz(L), flops and supernodes for the analysed ordering (see bl_order.c). */
int bs_symbolic(bs_handle *h, double *out) {
    if (!h->analysed && h->n > 0) return BL_NOT_FACTORED;
    for (int k = 0; k < 3; k++) out[k] = h->predicted[k];
    return BL_OK;
}

/* Row scale factors and the scaled values; the index of the first non-finite value, or -1. */
static int scale_rows(bs_handle *h) {
    int n = h->n, W = h->is_complex ? 2 : 1;
    for (int k = 0; k < W * h->nnz; k++)
        if (!isfinite(h->Ax[k])) { h->bad_index = k / W; return 0; }
    h->bad_index = -1;
    double *s = h->R;
    for (int i = 0; i < n; i++) s[i] = 0;
    if (h->scale != 0) {
        for (int j = 0; j < n; j++)
            for (int p = h->Ap[j]; p < h->Ap[j + 1]; p++) {
                double a = W == 2 ? hypot(h->Ax[2 * p], h->Ax[2 * p + 1]) : fabs(h->Ax[p]);
                int i = h->Ai[p];
                if (h->scale == 1) s[i] += a;
                else if (a > s[i]) s[i] = a;
            }
    }
    for (int i = 0; i < n; i++) s[i] = s[i] > 0 ? 1.0 / s[i] : 1.0;
    for (int j = 0; j < n; j++)
        for (int p = h->Ap[j]; p < h->Ap[j + 1]; p++)
            for (int w = 0; w < W; w++) h->As[W * p + w] = h->Ax[W * p + w] * s[h->Ai[p]];
    return 1;
}

/* Fresh numeric factorisation. */
int bs_factor(bs_handle *h) {
    if (!h->analysed && h->n > 0) return BL_NOT_FACTORED;
    free_lu(h);
    if (!scale_rows(h)) return BL_NONFINITE;
    if (h->n == 0) { h->factored = 1; return BL_OK; }
    int status = h->is_complex ? bs_z_factor(h) : bs_d_factor(h);
    if (status == BL_OK) { h->factored = 1; return BL_OK; }
    if (status == BL_SINGULAR) { h->singular = 1; return BL_SINGULAR; }
    if (status != BL_NONFINITE) free_lu(h);
    return status;
}

/* SuperLU has no cheaper numeric-only refactorisation: a fresh one. */
int bs_refactor(bs_handle *h) { return bs_factor(h); }

int bs_bad_index(bs_handle *h) { return h->bad_index; }
int bs_singular_col(bs_handle *h) { return h->singular_col; }
double bs_lnz(bs_handle *h) { return h->has_lu ? h->lnz : -1; }
double bs_unz(bs_handle *h) { return h->has_lu ? h->unz : -1; }
double bs_stored(bs_handle *h) { return h->has_lu ? h->stored : -1; }

double bs_rgrowth(bs_handle *h) {
    if (!h->factored) return -1;
    if (h->n == 0) return 1;
    return h->is_complex ? bs_z_rgrowth(h) : bs_d_rgrowth(h);
}

/* Cheap reciprocal condition estimate: min |U(k,k)| / max |U(k,k)|. */
double bs_rcond(bs_handle *h) {
    if (!h->factored) return -1;
    double lo = INFINITY, hi = 0;
    for (int k = 0; k < h->n; k++) {
        double a = h->is_complex ? hypot(h->udiag[2 * k], h->udiag[2 * k + 1]) : fabs(h->udiag[k]);
        if (a < lo) lo = a;
        if (a > hi) hi = a;
    }
    return h->n == 0 ? 1 : hi > 0 ? lo / hi : 0;
}

int bs_solve(bs_handle *h, double *B, int nrhs) {
    if (h->singular) return BL_SINGULAR;
    if (!h->factored) return BL_NOT_FACTORED;
    if (h->n == 0 || nrhs <= 0) return BL_OK;
    return h->is_complex ? bs_z_solve(h, B, nrhs, 0) : bs_d_solve(h, B, nrhs, 0);
}

/* Solve A' X = B (conj 1, complex only: A^H X = B). */
int bs_tsolve(bs_handle *h, double *B, int nrhs, int conj) {
    if (h->singular) return BL_SINGULAR;
    if (!h->factored) return BL_NOT_FACTORED;
    if (h->n == 0 || nrhs <= 0) return BL_OK;
    return h->is_complex ? bs_z_solve(h, B, nrhs, conj ? 2 : 1) : bs_d_solve(h, B, nrhs, 1);
}

/*
 * 1-norm condition number estimate ‖A‖₁·est(‖A⁻¹‖₁), with the estimator of Hager (1984) as
 * refined by Higham (1988): power iterations on sign vectors with solves by A and A^H, and the
 * alternating test vector (−1)^i (1 + i/(n−1)) as a safeguard. A few solves.
 */
double bs_condest(bs_handle *h) {
    if (h->singular) return INFINITY;
    if (!h->factored) return -1;
    int n = h->n, W = h->is_complex ? 2 : 1;
    if (n == 0) return 0;
    double anorm = 0;
    for (int j = 0; j < n; j++) {
        double s = 0;
        for (int p = h->Ap[j]; p < h->Ap[j + 1]; p++)
            s += W == 2 ? hypot(h->Ax[2 * p], h->Ax[2 * p + 1]) : fabs(h->Ax[p]);
        if (s > anorm) anorm = s;
    }
    double *x = (double *)calloc((size_t)n * W, sizeof(double));
    double *y = (double *)calloc((size_t)n * W, sizeof(double));
    if (!x || !y) { free(x); free(y); return -1; }
    double est = 0;
    int last = -1;
    for (int i = 0; i < n; i++) x[W * i] = 1.0 / n;
    for (int iter = 0; iter < 5; iter++) {
        if (bs_solve(h, x, 1) != BL_OK) break;
        double e = 0;
        for (int i = 0; i < n; i++) e += W == 2 ? hypot(x[2 * i], x[2 * i + 1]) : fabs(x[i]);
        if (iter > 0 && e <= est) break;
        est = e;
        /* y = sign(x) (for complex, x/|x|), then z = A^-H y */
        for (int i = 0; i < n; i++) {
            if (W == 2) {
                double a = hypot(x[2 * i], x[2 * i + 1]);
                y[2 * i] = a > 0 ? x[2 * i] / a : 1;
                y[2 * i + 1] = a > 0 ? x[2 * i + 1] / a : 0;
            } else {
                y[i] = x[i] >= 0 ? 1 : -1;
            }
        }
        if (bs_tsolve(h, y, 1, 1) != BL_OK) break;
        int j = 0;
        double zmax = -1;
        for (int i = 0; i < n; i++) {
            double a = W == 2 ? hypot(y[2 * i], y[2 * i + 1]) : fabs(y[i]);
            if (a > zmax) { zmax = a; j = i; }
        }
        if (j == last) break;
        last = j;
        memset(x, 0, sizeof(double) * (size_t)n * W);
        x[W * j] = 1;
    }
    /* the safeguard vector */
    memset(x, 0, sizeof(double) * (size_t)n * W);
    for (int i = 0; i < n; i++) x[W * i] = (i % 2 ? -1.0 : 1.0) * (1.0 + (n > 1 ? (double)i / (n - 1) : 0));
    if (bs_solve(h, x, 1) == BL_OK) {
        double e = 0;
        for (int i = 0; i < n; i++) e += W == 2 ? hypot(x[2 * i], x[2 * i + 1]) : fabs(x[i]);
        e = 2 * e / (3.0 * n);
        if (e > est) est = e;
    }
    free(x); free(y);
    return anorm * est;
}

/*
 * Determinant of A from Pr diag(R) A Pc = L U (L unit lower triangular):
 * det A = sign(Pr) sign(Pc) prod(diag U) / prod(R). Writes out[0] = sign (+1, -1, or 0 when
 * singular), out[1] = log |det A|; complex handles: out[0..1] = unit phase, out[2] = log |det A|.
 */
int bs_logdet(bs_handle *h, double *out) {
    if (h->singular) {
        out[0] = 0; out[1] = h->is_complex ? 0 : -INFINITY; out[2] = -INFINITY;
        return BL_OK;
    }
    if (!h->factored) return BL_NOT_FACTORED;
    int n = h->n;
    unsigned char *seen = (unsigned char *)malloc((size_t)(n > 0 ? n : 1));
    if (!seen) return BL_OUT_OF_MEMORY;
    int parity = n > 0 ? bl_perm_parity(h->perm_r, n, seen) ^ bl_perm_parity(h->perm_c, n, seen) : 0;
    free(seen);
    double logabs = 0;
    for (int k = 0; k < n; k++) logabs -= log(h->R[k]);
    bl_det_from_diagonal(h->udiag, n, h->is_complex, parity, logabs, out);
    return BL_OK;
}

void *bs_malloc(int bytes) { return malloc((size_t)(bytes > 0 ? bytes : 1)); }
void bs_free(void *p) { free(p); }
