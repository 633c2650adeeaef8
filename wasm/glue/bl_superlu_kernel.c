/*
 * branchline — the arithmetic-specific half of the SuperLU glue: factor, solve and pivot growth.
 * Compiled twice: as is (real, SuperLU's d routines) and with -DBS_COMPLEX (SuperLU's z
 * routines, values interleaved re, im). See bl_superlu.c for the handle's life cycle.
 */
#include <math.h>
#include <string.h>
#ifdef BS_COMPLEX
#include "slu_zdefs.h"
#define BS(x) bs_z_##x
#define GSTRF zgstrf
#define GSTRS zgstrs
#define PIVOT_GROWTH zPivotGrowth
#define CREATE_DENSE zCreate_Dense_Matrix
#define SCALAR doublecomplex
#define DTYPE SLU_Z
#define W 2
#else
#include "slu_ddefs.h"
#define BS(x) bs_d_##x
#define GSTRF dgstrf
#define GSTRS dgstrs
#define PIVOT_GROWTH dPivotGrowth
#define CREATE_DENSE dCreate_Dense_Matrix
#define SCALAR double
#define DTYPE SLU_D
#define W 1
#endif
#include "bl_superlu.h"

/* Copy U's diagonal (it lives in L's supernodes) into h->udiag, in pivot order. */
static void copy_udiag(bs_handle *h) {
    SCformat *Ls = (SCformat *)h->L.Store;
    const double *v = (const double *)Ls->nzval;
    for (int k = 0; k <= Ls->nsuper; k++) {
        int fsupc = Ls->sup_to_col[k], last = Ls->sup_to_col[k + 1];
        for (int j = fsupc; j < last; j++) {
            int at = Ls->nzval_colptr[j] + (j - fsupc);
            for (int c = 0; c < W; c++) h->udiag[W * j + c] = v[W * at + c];
        }
    }
}

int BS(factor)(bs_handle *h) {
    int n = h->n;
    volatile int info = 0;
    SuperLUStat_t stat;
    h->options.Fact = DOFACT;
    bs_ienv[6] = bs_fill_override > 0 ? bs_fill_override : h->fill_hint;
    StatInit(&stat);
    bs_abort_armed = 1;
    if (setjmp(bs_abort_jump)) {
        /* an allocation inside SuperLU failed; what it had allocated is lost (wasm memory is full anyway) */
        bs_abort_armed = 0;
        h->has_lu = 0;
        return BL_OUT_OF_MEMORY;
    }
    int inf = 0;
    GSTRF(&h->options, &h->AC, 0.0, sp_ienv(2), sp_ienv(1), h->etree, NULL, 0, h->perm_c, h->perm_r, &h->L, &h->U, &stat, &inf);
    info = inf;
    bs_abort_armed = 0;
    StatFree(&stat);
    if (info < 0) return BL_INVALID;
    if (info > n) return BL_OUT_OF_MEMORY; /* L and U were not created */
    h->has_lu = 1;
    copy_udiag(h);
    SCformat *Ls = (SCformat *)h->L.Store;
    NCformat *Us = (NCformat *)h->U.Store;
    /* countnz's figures: nnz(L) and nnz(U), both with the diagonal */
    h->lnz = Ls->nnz;
    h->unz = Us->nnz;
    h->stored = (double)Ls->nzval_colptr[n] + (double)Us->colptr[n];
    /* next time, allocate what this factorisation needed (plus a margin) at once */
    double need = fmax(fmax((double)Ls->nzval_colptr[n], (double)Us->colptr[n]), 4.0 * (double)Ls->rowind_colptr[n]);
    int hint = (int)ceil(1.1 * need / (h->nnz > 0 ? h->nnz : 1));
    h->fill_hint = hint < 4 ? 4 : hint;
    if (info > 0) {
        /* an exactly zero pivot in column info-1 of A·Pc: report the original column */
        int col = info - 1;
        for (int j = 0; j < n; j++) if (h->perm_c[j] == col) { h->singular_col = j; break; }
        return BL_SINGULAR;
    }
    for (int k = 0; k < W * n; k++) if (!isfinite(h->udiag[k])) return BL_NONFINITE;
    return BL_OK;
}

/* Solve with the factors of diag(R) A: trans 0 A X = B, 1 A' X = B, 2 A^H X = B. */
int BS(solve)(bs_handle *h, double *B, int nrhs, int trans) {
    int n = h->n;
    if (trans == 0)
        for (int c = 0; c < nrhs; c++)
            for (int i = 0; i < n; i++)
                for (int w = 0; w < W; w++) B[W * ((size_t)c * n + i) + w] *= h->R[i];
    SuperMatrix X;
    CREATE_DENSE(&X, n, nrhs, (SCALAR *)B, n, SLU_DN, DTYPE, SLU_GE);
    SuperLUStat_t stat;
    StatInit(&stat);
    int info = 0;
    bs_abort_armed = 1;
    if (setjmp(bs_abort_jump)) {
        bs_abort_armed = 0;
        return BL_OUT_OF_MEMORY;
    }
    GSTRS(trans == 0 ? NOTRANS : trans == 1 ? TRANS : CONJ, &h->L, &h->U, h->perm_c, h->perm_r, &X, &stat, &info);
    bs_abort_armed = 0;
    StatFree(&stat);
    Destroy_SuperMatrix_Store(&X);
    if (info != 0) return BL_INVALID;
    if (trans != 0)
        for (int c = 0; c < nrhs; c++)
            for (int i = 0; i < n; i++)
                for (int w = 0; w < W; w++) B[W * ((size_t)c * n + i) + w] *= h->R[i];
    return BL_OK;
}

/* Reciprocal pivot growth of the factors of diag(R) A. */
double BS(rgrowth)(bs_handle *h) {
    return PIVOT_GROWTH(h->n, &h->A, h->perm_c, &h->L, &h->U);
}
