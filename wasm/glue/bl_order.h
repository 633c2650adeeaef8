/* branchline — fill-reducing orderings shared by the KLU and SuperLU glues (see bl_order.c). */
#ifndef BL_ORDER_H
#define BL_ORDER_H

/* METIS nested dissection of pattern(A + A'); Perm[k] = original index of the k-th pivot.
   dense_last: order rows/columns of degree above max(16, 10 sqrt(n)) last, outside METIS.
   Returns a positive number on success, 0 on failure. */
int bl_metis_nd(int n, const int *Cp, const int *Ci, int *Perm, int dense_last);

/* Cholesky prediction for P (A + A') P' with Perm as above: out[0] = nnz(L) (diagonal
   included), out[1] = LU flop count, out[2] = fundamental supernodes. Returns 0 on failure. */
int bl_symbolic_counts(int n, const int *Cp, const int *Ci, const int *Perm, double *out);

#endif
