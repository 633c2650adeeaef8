/*
 * branchline — the SuperLU glue's handle, shared by the generic part (bl_superlu.c) and the
 * real and complex kernels (bl_superlu_kernel.c, compiled once per arithmetic).
 */
#ifndef BL_SUPERLU_H
#define BL_SUPERLU_H

#include <setjmp.h>
typedef int int_t; /* SuperLU's index type (slu_ddefs.h and slu_zdefs.h define it too) */
#include "slu_Cnames.h"
#include "supermatrix.h"
#include "slu_util.h"

#include "bl_common.h"  /* status codes (BL_*), the determinant helpers */

typedef struct {
    int n, nnz, is_complex;
    int *Ap, *Ai;
    double *Ax;            /* the caller's values: nnz (real) or 2*nnz (complex, interleaved) */
    double *As;            /* row-scaled values, what SuperLU factors */
    double *R;             /* row scale factors: As = diag(R) A (all 1 without scaling) */
    int scale;             /* 0 none, 1 sum, 2 max (as in KLU) */
    double tol;            /* diagonal pivot threshold */
    int *perm;             /* given ordering, KLU convention: perm[k] = original index of pivot k */
    int *perm_c, *perm_r, *etree;
    int analysed, factored, singular, symmetric_mode;
    int bad_index, singular_col;
    double lnz, unz, stored;   /* nnz(L) with its diagonal, nnz(U) with its diagonal, values stored */
    double *udiag;         /* U's diagonal in pivot order (n real or 2n interleaved complex) */
    int fill_hint;         /* storage guess for the next factorisation, in multiples of nnz(A) */
    double predicted[3];   /* the ordering's predicted factor (bl_symbolic_counts) */
    NCformat Astore;
    SuperMatrix A, AC, L, U;
    int has_lu;
    superlu_options_t options;
} bs_handle;

/* A SuperLU abort (failed allocation inside SuperLU) longjmps here instead of exiting. */
extern jmp_buf bs_abort_jump;
extern int bs_abort_armed;
void bs_abort(char *msg);

/* tuning knobs read by sp_ienv (bl_superlu.c) */
extern int bs_ienv[7];
extern int bs_fill_override;

int bs_d_factor(bs_handle *h);
int bs_z_factor(bs_handle *h);
int bs_d_solve(bs_handle *h, double *B, int nrhs, int trans);
int bs_z_solve(bs_handle *h, double *B, int nrhs, int trans);
double bs_d_rgrowth(bs_handle *h);
double bs_z_rgrowth(bs_handle *h);
void bs_d_free_lu(bs_handle *h);
void bs_z_free_lu(bs_handle *h);

#endif
