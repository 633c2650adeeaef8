/*
 * branchline — fill-reducing orderings shared by the KLU and SuperLU glues (WebAssembly).
 *
 * bl_metis_nd: METIS nested dissection (METIS_NodeND) on the pattern of A + A' (diagonal
 * dropped, duplicates merged). Optionally the dense rows/columns (a continuation border, a
 * constraint row: degree above max(16, 10·sqrt(n))) are left out of the graph and ordered last,
 * as minimum-degree codes do: they would otherwise sit in every separator METIS considers.
 *
 * bl_symbolic_counts: the nonzero count and the flop count of the Cholesky factor of
 * P (A + A') P' for a given ordering (elimination tree with path compression, then the row
 * subtrees), and the number of fundamental supernodes: a prediction of the work of a sparse LU
 * with that ordering and diagonal pivots, from the pattern alone (deterministic).
 *
 * Permutations follow KLU's convention: Perm[k] = the original index of the k-th pivot.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include "metis.h"
#include "bl_order.h"

/* Adjacency (CSR, symmetric, no diagonal, no duplicates) of pattern(A + A'); NULL on failure. */
static int bl_symmetrise(int n, const int *Cp, const int *Ci, int **xadj_out, int **adj_out) {
    int *deg = (int *)calloc((size_t)(n > 0 ? n : 1), sizeof(int));
    if (!deg) return 0;
    for (int j = 0; j < n; j++)
        for (int p = Cp[j]; p < Cp[j + 1]; p++) {
            int i = Ci[p];
            if (i != j) { deg[i]++; deg[j]++; }
        }
    int *xadj = (int *)malloc(sizeof(int) * (size_t)(n + 1));
    long total = 0;
    for (int k = 0; k < n; k++) total += deg[k];
    int *adj = (int *)malloc(sizeof(int) * (size_t)(total > 0 ? total : 1));
    int *fill = (int *)malloc(sizeof(int) * (size_t)(n > 0 ? n : 1));
    if (!xadj || !adj || !fill) { free(deg); free(xadj); free(adj); free(fill); return 0; }
    xadj[0] = 0;
    for (int k = 0; k < n; k++) { xadj[k + 1] = xadj[k] + deg[k]; fill[k] = xadj[k]; }
    for (int j = 0; j < n; j++)
        for (int p = Cp[j]; p < Cp[j + 1]; p++) {
            int i = Ci[p];
            if (i != j) { adj[fill[i]++] = j; adj[fill[j]++] = i; }
        }
    free(deg);
    /* remove duplicate neighbours (entries present in both A and A') in place */
    int *mark = fill;
    for (int k = 0; k < n; k++) mark[k] = -1;
    int w = 0, start = 0;
    for (int k = 0; k < n; k++) {
        int end = xadj[k + 1];
        xadj[k] = w;
        for (int p = start; p < end; p++) {
            int j = adj[p];
            if (mark[j] != k) { mark[j] = k; adj[w++] = j; }
        }
        start = end;
    }
    xadj[n] = w;
    free(fill);
    *xadj_out = xadj;
    *adj_out = adj;
    return 1;
}

int bl_metis_nd(int n, const int *Cp, const int *Ci, int *Perm, int dense_last) {
    if (n <= 3) {
        for (int k = 0; k < n; k++) Perm[k] = k;
        return n * (n + 1) / 2 + 1;
    }
    int *xadj, *adj;
    if (!bl_symmetrise(n, Cp, Ci, &xadj, &adj)) return 0;
    int nnz_sym = xadj[n];
    /* which nodes are dense (ordered last, outside METIS) */
    int *keep = (int *)malloc(sizeof(int) * (size_t)n); /* old -> compressed index, or -1 */
    int *back = (int *)malloc(sizeof(int) * (size_t)n); /* compressed -> old */
    if (!keep || !back) { free(xadj); free(adj); free(keep); free(back); return 0; }
    double limit = dense_last ? fmax(16.0, 10.0 * sqrt((double)n)) : (double)n + 1;
    int nk = 0;
    for (int k = 0; k < n; k++) {
        if (xadj[k + 1] - xadj[k] > limit) keep[k] = -1;
        else { keep[k] = nk; back[nk++] = k; }
    }
    int ok = 0;
    idx_t *gx = (idx_t *)malloc(sizeof(idx_t) * (size_t)(nk + 1));
    idx_t *ga = (idx_t *)malloc(sizeof(idx_t) * (size_t)(nnz_sym > 0 ? nnz_sym : 1));
    idx_t *perm = (idx_t *)malloc(sizeof(idx_t) * (size_t)(nk > 0 ? nk : 1));
    idx_t *iperm = (idx_t *)malloc(sizeof(idx_t) * (size_t)(nk > 0 ? nk : 1));
    if (gx && ga && perm && iperm) {
        idx_t w = 0;
        gx[0] = 0;
        for (int c = 0; c < nk; c++) {
            int k = back[c];
            for (int p = xadj[k]; p < xadj[k + 1]; p++)
                if (keep[adj[p]] >= 0) ga[w++] = keep[adj[p]];
            gx[c + 1] = w;
        }
        if (nk <= 3) {
            for (int c = 0; c < nk; c++) perm[c] = c;
            ok = 1;
        } else {
            idx_t nv = nk;
            idx_t options[METIS_NOPTIONS];
            METIS_SetDefaultOptions(options);
            options[METIS_OPTION_NUMBERING] = 0;
            ok = METIS_NodeND(&nv, gx, ga, NULL, options, perm, iperm) == METIS_OK;
        }
        if (ok) {
            int pos = 0;
            for (int c = 0; c < nk; c++) Perm[pos++] = back[perm[c]];
            for (int k = 0; k < n; k++) if (keep[k] < 0) Perm[pos++] = k;
        }
    }
    free(gx); free(ga); free(perm); free(iperm); free(keep); free(back); free(xadj); free(adj);
    /* callers only need a positive value here (KLU recomputes nnz(L) while factoring) */
    return ok ? (nnz_sym + n > 0 ? nnz_sym + n : 1) : 0;
}

int bl_symbolic_counts(int n, const int *Cp, const int *Ci, const int *Perm, double *out) {
    out[0] = out[1] = out[2] = 0;
    if (n == 0) return 1;
    int *xadj, *adj;
    if (!bl_symmetrise(n, Cp, Ci, &xadj, &adj)) return 0;
    int *inv = (int *)malloc(sizeof(int) * (size_t)n);
    int *parent = (int *)malloc(sizeof(int) * (size_t)n);
    int *ancestor = (int *)malloc(sizeof(int) * (size_t)n);
    int *count = (int *)calloc((size_t)n, sizeof(int));
    int *mark = (int *)malloc(sizeof(int) * (size_t)n);
    if (!inv || !parent || !ancestor || !count || !mark) {
        free(xadj); free(adj); free(inv); free(parent); free(ancestor); free(count); free(mark);
        return 0;
    }
    for (int k = 0; k < n; k++) inv[Perm[k]] = k;
    /* elimination tree of the permuted matrix (Liu, with path compression) */
    for (int k = 0; k < n; k++) {
        parent[k] = -1;
        ancestor[k] = -1;
        int old = Perm[k];
        for (int p = xadj[old]; p < xadj[old + 1]; p++) {
            int i = inv[adj[p]];
            while (i != -1 && i < k) {
                int next = ancestor[i];
                ancestor[i] = k;
                if (next == -1) { parent[i] = k; break; }
                i = next;
            }
        }
    }
    /* row subtrees: row k of L has a nonzero in column j for every j on the paths from its entries up to k */
    for (int k = 0; k < n; k++) mark[k] = -1;
    for (int k = 0; k < n; k++) {
        mark[k] = k;
        int old = Perm[k];
        for (int p = xadj[old]; p < xadj[old + 1]; p++) {
            int j = inv[adj[p]];
            while (j < k && mark[j] != k) {
                count[j]++;
                mark[j] = k;
                j = parent[j];
            }
        }
    }
    double lnz = 0, flops = 0, nsuper = 0;
    for (int j = 0; j < n; j++) {
        double c = count[j];
        lnz += c + 1;
        flops += c + 2.0 * c * c; /* LU of a symmetric pattern: c divisions, c² multiply-adds in L and in U */
        /* j starts a new fundamental supernode unless it continues j-1's column structure */
        if (!(j > 0 && parent[j - 1] == j && count[j - 1] == count[j] + 1)) nsuper++;
    }
    out[0] = lnz;
    out[1] = flops;
    out[2] = nsuper;
    free(xadj); free(adj); free(inv); free(parent); free(ancestor); free(count); free(mark);
    return 1;
}
