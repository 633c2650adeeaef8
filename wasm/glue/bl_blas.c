/*
 * branchline — the BLAS entry points SuperLU calls, on the reference BLAS (Debian's `lapack`
 * source package, translated to C by Debian's f2c when wasm/build.sh runs).
 *
 * SuperLU calls dtrsv_, dgemv_, dtrsm_, dgemm_ (and their z versions) without Fortran's hidden
 * string-length arguments; f2c's translations take them. On native targets the difference goes
 * unnoticed; in WebAssembly a call must match the callee's signature exactly, so the
 * translations are compiled under bl_f2c_* names and these wrappers pass the lengths (1).
 * lsame_ and xerbla_ of the translations are renamed too (SuperLU has two-argument versions).
 */
#include <ctype.h>

typedef struct { double r, i; } bl_dcomplex;

int bl_f2c_dtrsv(char *, char *, char *, int *, double *, int *, double *, int *, long, long, long);
int bl_f2c_dgemv(char *, int *, int *, double *, double *, int *, double *, int *, double *, double *, int *, long);
int bl_f2c_dtrsm(char *, char *, char *, char *, int *, int *, double *, double *, int *, double *, int *, long, long, long, long);
int bl_f2c_dgemm(char *, char *, int *, int *, int *, double *, double *, int *, double *, int *, double *, double *, int *, long, long);
int bl_f2c_ztrsv(char *, char *, char *, int *, bl_dcomplex *, int *, bl_dcomplex *, int *, long, long, long);
int bl_f2c_zgemv(char *, int *, int *, bl_dcomplex *, bl_dcomplex *, int *, bl_dcomplex *, int *, bl_dcomplex *, bl_dcomplex *, int *, long);
int bl_f2c_ztrsm(char *, char *, char *, char *, int *, int *, bl_dcomplex *, bl_dcomplex *, int *, bl_dcomplex *, int *, long, long, long, long);
int bl_f2c_zgemm(char *, char *, int *, int *, int *, bl_dcomplex *, bl_dcomplex *, int *, bl_dcomplex *, int *, bl_dcomplex *, bl_dcomplex *, int *, long, long);

void dtrsv_(char *uplo, char *trans, char *diag, int *n, double *a, int *lda, double *x, int *incx) {
    bl_f2c_dtrsv(uplo, trans, diag, n, a, lda, x, incx, 1, 1, 1);
}
void dgemv_(char *trans, int *m, int *n, double *alpha, double *a, int *lda, double *x, int *incx, double *beta, double *y, int *incy) {
    bl_f2c_dgemv(trans, m, n, alpha, a, lda, x, incx, beta, y, incy, 1);
}
void dtrsm_(char *side, char *uplo, char *transa, char *diag, int *m, int *n, double *alpha, double *a, int *lda, double *b, int *ldb) {
    bl_f2c_dtrsm(side, uplo, transa, diag, m, n, alpha, a, lda, b, ldb, 1, 1, 1, 1);
}
void dgemm_(char *transa, char *transb, int *m, int *n, int *k, double *alpha, double *a, int *lda, double *b, int *ldb, double *beta, double *c, int *ldc) {
    bl_f2c_dgemm(transa, transb, m, n, k, alpha, a, lda, b, ldb, beta, c, ldc, 1, 1);
}
void ztrsv_(char *uplo, char *trans, char *diag, int *n, bl_dcomplex *a, int *lda, bl_dcomplex *x, int *incx) {
    bl_f2c_ztrsv(uplo, trans, diag, n, a, lda, x, incx, 1, 1, 1);
}
void zgemv_(char *trans, int *m, int *n, bl_dcomplex *alpha, bl_dcomplex *a, int *lda, bl_dcomplex *x, int *incx, bl_dcomplex *beta, bl_dcomplex *y, int *incy) {
    bl_f2c_zgemv(trans, m, n, alpha, a, lda, x, incx, beta, y, incy, 1);
}
void ztrsm_(char *side, char *uplo, char *transa, char *diag, int *m, int *n, bl_dcomplex *alpha, bl_dcomplex *a, int *lda, bl_dcomplex *b, int *ldb) {
    bl_f2c_ztrsm(side, uplo, transa, diag, m, n, alpha, a, lda, b, ldb, 1, 1, 1, 1);
}
void zgemm_(char *transa, char *transb, int *m, int *n, int *k, bl_dcomplex *alpha, bl_dcomplex *a, int *lda, bl_dcomplex *b, int *ldb, bl_dcomplex *beta, bl_dcomplex *c, int *ldc) {
    bl_f2c_zgemm(transa, transb, m, n, k, alpha, a, lda, b, ldb, beta, c, ldc, 1, 1);
}

/* Fortran's LSAME (case-insensitive comparison of two letters), as the translations call it. */
long bl_blas_lsame(char *a, char *b, long la, long lb) {
    (void)la; (void)lb;
    return toupper((unsigned char)*a) == toupper((unsigned char)*b);
}

/* The reference BLAS's error handler: SuperLU never passes invalid arguments; nothing to print. */
int bl_blas_xerbla(char *name, long *info, long len) {
    (void)name; (void)info; (void)len;
    return 0;
}
