#!/usr/bin/env python3
"""
The benchmark's outside reference: pseudo-arclength continuation of the Bratu problem
Δu + λ e^u = 0 (u = 0 on the walls of the unit square or cube) written the way a practitioner
would write it with SciPy, on the same discrete operator as branchline's `bratu` model:

  * vertex-centred grid, m interior nodes per axis, h = 1/(m + 1), Dirichlet nodes eliminated,
    the standard (2d+1)-point Laplacian, unknowns numbered x fastest (then y, then z);
  * the weighted norm  ‖x‖² = h^d Σ u_i² + λ²  and the scaled residual ‖D⁻¹F‖_w with the row
    scaling D_ii = max(1, max_j |J_ij|) frozen at the start point;
  * Keller's pseudo-arclength corrector on the bordered matrix [[J, F_λ], [w∘τ_uᵀ, τ_λ]],
    factored by `splu` (SuperLU, SciPy's defaults) at every Newton iteration (plain Newton);
  * the tangent from the last factorisation (right-hand side e_{n+1}, normalised in the weighted
    norm, oriented along the previous tangent);
  * the same step rule as branchline: the step grows ×2, ×1.5, ×1.2, ×1 or ×0.6 after 1, 2, 3,
    4–5 or more Newton iterations, halves on a failed corrector or a tangent turned by more than
    30°, within [min, max];
  * the same Newton tests: residual below 1e-9 and update below 1e-9·(1 + ‖x‖), at most 10
    iterations, an update longer than 2·max(ds, 1e-3) counts as divergence;
  * `count` eigenvalues of J at every accepted point (the start included) by ARPACK in
    shift-invert mode about 0 (`scipy.sparse.linalg.eigs(J, k, sigma=0)`; tolerance 1e-8, like
    branchline's Krylov tolerance).

Folds are detected by the sign change of τ_λ; with --locate-fold the fold is located by the
secant method on τ_λ along the arc (used to check the reference against branchline, not timed).

Prints one JSON document on stdout: the points (λ, max u, τ_λ, Newton iterations, step,
eigenvalues, `elapsed` seconds since the continuation began, with --states the state u), the
fold, the counts of factorisations and solves, and the seconds spent (`importSeconds`: the
imports; `seconds`: the continuation itself, operator assembly included).

  python3 arclength_scipy.py --dim 2 --m 200 --steps 40 --eigenvalues 6
"""
import time

T_IMPORT = time.perf_counter()

import argparse  # noqa: E402
import json  # noqa: E402
import math  # noqa: E402
import sys  # noqa: E402

import numpy as np  # noqa: E402
import scipy  # noqa: E402
import scipy.sparse as sp  # noqa: E402
from scipy.sparse.linalg import eigs, splu  # noqa: E402

IMPORT_SECONDS = time.perf_counter() - T_IMPORT


def laplacian(m, dim):
    """The (2d+1)-point Laplacian on m^dim interior nodes, x fastest; returns (L, h)."""
    h = 1.0 / (m + 1)
    e = np.ones(m)
    t = sp.diags([e[:-1], -2.0 * e, e[:-1]], [-1, 0, 1], format="csr") / (h * h)
    i = sp.identity(m, format="csr")
    if dim == 1:
        lap = t
    elif dim == 2:
        lap = sp.kron(i, t) + sp.kron(t, i)
    elif dim == 3:
        lap = sp.kron(i, sp.kron(i, t)) + sp.kron(i, sp.kron(t, i)) + sp.kron(t, sp.kron(i, i))
    else:
        raise SystemExit(f"--dim must be 1, 2 or 3, got {dim}")
    return lap.tocsr(), h


class Bratu:
    def __init__(self, m, dim):
        self.lap, h = laplacian(m, dim)
        self.n = self.lap.shape[0]
        self.w = h ** dim
        self.rowscale = np.ones(self.n)

    def residual(self, u, lam):
        return self.lap @ u + lam * np.exp(u)

    def jacobian(self, u, lam):
        return (self.lap + sp.diags(lam * np.exp(u))).tocsc()

    def dparam(self, u, lam):
        return np.exp(u)

    def freeze_rowscale(self, u, lam):
        rowmax = abs(self.jacobian(u, lam)).max(axis=1).toarray().ravel()
        self.rowscale = 1.0 / np.maximum(1.0, rowmax)

    # weighted inner product and norms on (u, λ)
    def dot(self, a, b):
        return self.w * float(a[:-1] @ b[:-1]) + float(a[-1] * b[-1])

    def norm(self, a):
        return math.sqrt(self.dot(a, a))

    def scaled_residual(self, f):
        g = f * self.rowscale
        return math.sqrt(self.w * float(g @ g))

    def bordered(self, x, t):
        u, lam = x[:-1], x[-1]
        jac = self.jacobian(u, lam)
        col = sp.csc_matrix(self.dparam(u, lam)[:, None])
        row = sp.csr_matrix((self.w * t[:-1])[None, :])
        return sp.bmat([[jac, col], [row, sp.csr_matrix([[t[-1]]])]], format="csc")


class Counters:
    def __init__(self):
        self.factorisations = 0
        self.solves = 0
        self.eigen_seconds = 0.0


def correct(p, x, t, ref, ds, counters, max_iterations=10, tol=1e-9, step_tol=1e-9):
    """Newton on F = 0, ⟨t, x − ref⟩_w = 0 from x; returns (x, converged, iterations, last LU)."""
    x = x.copy()
    lu = None
    last_update = math.inf
    max_update = 2.0 * max(ds, 1e-3) if ds is not None else math.inf
    for it in range(max_iterations + 1):
        f = p.residual(x[:-1], x[-1])
        res = p.scaled_residual(f)
        if not math.isfinite(res):
            return x, False, it, lu
        g = p.dot(t, x - ref)
        xnorm = p.norm(x)
        step_ok = abs(g) <= step_tol * (1 + xnorm) if it == 0 else last_update <= step_tol * (1 + xnorm)
        if res <= tol and (step_ok or (it > 0 and res <= 1e-4 * tol)):
            return x, True, it, lu
        if it == max_iterations:
            return x, False, it, lu
        lu = splu(p.bordered(x, t))
        counters.factorisations += 1
        delta = lu.solve(-np.append(f, g))
        counters.solves += 1
        if not np.all(np.isfinite(delta)):
            return x, False, it + 1, lu
        x += delta
        last_update = p.norm(delta)
        if last_update > max_update:
            return x, False, it + 1, lu
    return x, False, max_iterations, lu


def tangent(p, lu, x, prev, counters):
    """Unit tangent from the factored bordered matrix with border row `prev` (factored at x when lu is None)."""
    if lu is None:
        lu = splu(p.bordered(x, prev))
        counters.factorisations += 1
    rhs = np.zeros(p.n + 1)
    rhs[-1] = 1.0
    z = lu.solve(rhs)
    counters.solves += 1
    z /= p.norm(z)
    if p.dot(z, prev) < 0:
        z = -z
    return z


def eigenvalues(p, x, count, counters):
    t0 = time.perf_counter()
    vals = eigs(p.jacobian(x[:-1], x[-1]), k=count, sigma=0.0, which="LM", tol=1e-8, return_eigenvectors=False)
    counters.eigen_seconds += time.perf_counter() - t0
    vals = sorted(vals, key=lambda z: (-z.real, -z.imag))
    return [[float(z.real), float(z.imag)] for z in vals]


def locate_fold(p, xa, ta, counters, ds_hi, tol=1e-10):
    """Secant method on τ_λ(s) along the arc from (xa, ta): the point where τ_λ = 0."""
    def at(s):
        xp = xa + s * ta
        x, ok, _, lu = correct(p, xp, ta, xp, None, counters, max_iterations=30)
        if not ok:
            raise RuntimeError(f"fold location: no convergence at arclength {s}")
        return x, tangent(p, lu, x, ta, counters)

    s0, f0 = 0.0, ta[-1]
    s1 = ds_hi
    x1, t1 = at(s1)
    f1 = t1[-1]
    for _ in range(50):
        if abs(f1) < tol or f1 == f0:
            break
        s2 = s1 - f1 * (s1 - s0) / (f1 - f0)
        s0, f0 = s1, f1
        s1 = s2
        x1, t1 = at(s1)
        f1 = t1[-1]
    return x1


def run(args):
    counters = Counters()
    t0 = time.perf_counter()
    p = Bratu(args.m, args.dim)
    n = p.n
    lo, hi = args.bounds
    x = np.zeros(n + 1)
    x[-1] = args.lambda0
    p.freeze_rowscale(x[:-1], x[-1])
    e_lam = np.zeros(n + 1)
    e_lam[-1] = 1.0
    x, ok, its, lu = correct(p, x, e_lam, x.copy(), None, counters, max_iterations=30)
    if not ok:
        raise SystemExit("the start point did not converge")
    t = tangent(p, lu, x, e_lam, counters)
    if t[-1] < 0:
        t = -t
    points = []

    def record(x, t, its, ds):
        pt = {"parameter": float(x[-1]), "max": float(x[:-1].max()), "tangentParameter": float(t[-1]), "newtonIterations": its, "step": ds,
              "elapsed": time.perf_counter() - t0}
        if args.states:
            pt["u"] = x[:-1].tolist()
        if args.eigenvalues > 0:
            pt["eigenvalues"] = eigenvalues(p, x, args.eigenvalues, counters)
            pt["elapsed"] = time.perf_counter() - t0
        points.append(pt)

    record(x, t, its, 0.0)
    ds = args.step[0]
    ds_min, ds_max = args.step[1], args.step[2]
    cos_max = math.cos(math.radians(30.0))
    fold = None
    stop = "steps"
    while len(points) <= args.steps:
        xp = x + ds * t
        xn, ok, its, lu = correct(p, xp, t, xp, ds, counters)
        tn = None
        if ok:
            tn = tangent(p, lu, xn, t, counters)
            if p.dot(tn, t) < cos_max and ds > ds_min:
                ok = False
        if not ok:
            ds *= 0.5
            if ds < ds_min:
                stop = "minimum-step"
                break
            continue
        if fold is None and tn[-1] * t[-1] < 0:
            fold = {"between": [float(x[-1]), float(xn[-1])]}
            if args.locate_fold:
                xf = locate_fold(p, x, t, counters, ds)
                fold["value"] = float(xf[-1])
                fold["max"] = float(xf[:-1].max())
                if args.states:
                    fold["u"] = xf[:-1].tolist()
                if args.eigenvalues > 0:
                    fold["eigenvalues"] = eigenvalues(p, xf, args.eigenvalues, counters)
        x, t = xn, tn
        grow = 2.0 if its <= 1 else 1.5 if its == 2 else 1.2 if its == 3 else 1.0 if its <= 5 else 0.6
        record(x, t, its, ds)
        ds = min(ds_max, max(ds_min, ds * grow))
        if x[-1] > hi or x[-1] < lo:
            stop = "parameter-bound"
            break
    seconds = time.perf_counter() - t0
    return {
        "reference": "SciPy pseudo-arclength (splu per Newton iteration, ARPACK shift-invert)",
        "python": sys.version.split()[0],
        "numpy": np.__version__,
        "scipy": scipy.__version__,
        "dim": args.dim,
        "m": args.m,
        "unknowns": n,
        "eigenvalueCount": args.eigenvalues,
        "steps": len(points) - 1,
        "stop": stop,
        "importSeconds": IMPORT_SECONDS,
        "seconds": seconds,
        "secondsPerStep": seconds / max(1, len(points) - 1),
        "eigenSeconds": counters.eigen_seconds,
        "factorisations": counters.factorisations,
        "solves": counters.solves,
        "fold": fold,
        "points": points,
    }


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--dim", type=int, default=2)
    ap.add_argument("--m", type=int, default=200, help="interior nodes per axis (intervals m + 1)")
    ap.add_argument("--steps", type=int, default=20, help="continuation steps after the start point")
    ap.add_argument("--eigenvalues", type=int, default=6)
    ap.add_argument("--lambda0", type=float, default=1.0)
    ap.add_argument("--bounds", type=float, nargs=2, default=[0.0, 10.0])
    ap.add_argument("--step", type=float, nargs=3, default=[0.25, 1e-8, 0.25], metavar=("INITIAL", "MIN", "MAX"))
    ap.add_argument("--locate-fold", action="store_true")
    ap.add_argument("--states", action="store_true", help="include every point's state u (small grids: for checks)")
    args = ap.parse_args()
    json.dump(run(args), sys.stdout)
    sys.stdout.write("\n")


if __name__ == "__main__":
    main()
