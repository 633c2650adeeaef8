/*
 * branchline — included in front of every SuperLU source file (-include): the prototypes SuperLU
 * 3.0 leaves out. In WebAssembly a call must match its callee's signature exactly, and an
 * implicitly declared function returns int.
 *  - bs_abort: SuperLU is compiled with -DUSER_ABORT=bs_abort, so that a failed allocation inside
 *    SuperLU returns to the glue (bl_superlu.c) instead of exiting the process;
 *  - its own dense kernels (dmyblas2.c, zmyblas2.c), used when it is built without a BLAS.
 */
#include "slu_dcomplex.h"
void bs_abort(char *msg);
void dlsolve(int ldm, int ncol, double *M, double *rhs);
void dusolve(int ldm, int ncol, double *M, double *rhs);
void dmatvec(int ldm, int nrow, int ncol, double *M, double *vec, double *Mxvec);
void zlsolve(int ldm, int ncol, doublecomplex *M, doublecomplex *rhs);
void zusolve(int ldm, int ncol, doublecomplex *M, doublecomplex *rhs);
void zmatvec(int ldm, int nrow, int ncol, doublecomplex *M, doublecomplex *vec, doublecomplex *Mxvec);
