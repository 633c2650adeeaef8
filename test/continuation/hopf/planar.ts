/**
 * Test helpers: the first Lyapunov coefficient of a PLANAR system ẋ = Ax + B(x, x)/2 + C(x, x, x)/6
 * computed independently of the project's code — dense 2×2 complex arithmetic written out here —
 * with Kuznetsov's formula (*Elements of Applied Bifurcation Theory*, 3rd ed., §3.5, (3.20); from
 * memory), q normalised to q̄ᵀq = 1 and ⟨p, q⟩ = p̄ᵀq = 1. A uniform state of a reaction–diffusion
 * system with no-flux walls is such a planar system; its critical eigenvector on the grid is q at
 * every node divided by √|Ω| (so that Σ wᵢ|qᵢ|² = 1), which divides l₁ by the domain's measure |Ω|.
 */

export type C = [number, number];
const add = (a: C, b: C): C => [a[0] + b[0], a[1] + b[1]];
const sub = (a: C, b: C): C => [a[0] - b[0], a[1] - b[1]];
const mul = (a: C, b: C): C => [a[0] * b[0] - a[1] * b[1], a[0] * b[1] + a[1] * b[0]];
const div = (a: C, b: C): C => {
  const d = b[0] * b[0] + b[1] * b[1];
  return [(a[0] * b[0] + a[1] * b[1]) / d, (a[1] * b[0] - a[0] * b[1]) / d];
};
const conj = (a: C): C => [a[0], -a[1]];
const re = (x: number): C => [x, 0];

export type Vec = [C, C];
export type Bilinear = (x: Vec, y: Vec) => Vec;
export type Trilinear = (x: Vec, y: Vec, z: Vec) => Vec;

/** Solve the complex 2×2 system M z = r by Cramer's rule. */
function solve2(M: [[C, C], [C, C]], r: Vec): Vec {
  const det = sub(mul(M[0][0], M[1][1]), mul(M[0][1], M[1][0]));
  return [div(sub(mul(r[0], M[1][1]), mul(M[0][1], r[1])), det), div(sub(mul(M[0][0], r[1]), mul(r[0], M[1][0])), det)];
}

const inner = (p: Vec, x: Vec): C => add(mul(conj(p[0]), x[0]), mul(conj(p[1]), x[1]));

/** l₁ of ẋ = Ax + … at a Hopf point of the real 2×2 matrix A (trace 0, det = ω² > 0). */
export function planarLyapunov(A: [[number, number], [number, number]], B: Bilinear, Cf: Trilinear): { l1: number; omega: number } {
  const omega = Math.sqrt(A[0][0] * A[1][1] - A[0][1] * A[1][0]);
  // (A − iω)q = 0: q = (a12, iω − a11); (Aᵀ + iω)p = 0: p = (a21, −(a11 + iω))
  let q: Vec = [re(A[0][1]), [-A[0][0], omega]];
  const nq = Math.sqrt(inner(q, q)[0]);
  q = [div(q[0], re(nq)), div(q[1], re(nq))];
  let p: Vec = [re(A[1][0]), [-A[0][0], -omega]];
  // scale p so that p̄ᵀq = 1
  const k = inner(p, q);
  p = [div(p[0], conj(k)), div(p[1], conj(k))];
  const qb: Vec = [conj(q[0]), conj(q[1])];
  const Ar: [[C, C], [C, C]] = [
    [re(A[0][0]), re(A[0][1])],
    [re(A[1][0]), re(A[1][1])],
  ];
  const r1 = solve2(Ar, B(q, qb));
  const shifted: [[C, C], [C, C]] = [
    [sub([0, 2 * omega], Ar[0][0]), sub(re(0), Ar[0][1])],
    [sub(re(0), Ar[1][0]), sub([0, 2 * omega], Ar[1][1])],
  ];
  const r2 = solve2(shifted, B(q, q));
  const t1 = inner(p, Cf(q, q, qb));
  const t2 = inner(p, B(q, r1));
  const t3 = inner(p, B(qb, r2));
  const l1 = (t1[0] - 2 * t2[0] + t3[0]) / (2 * omega);
  return { l1, omega };
}

/** Complex helpers for writing B and C of polynomial nonlinearities. */
export const cx = { add, sub, mul, re, conj };
