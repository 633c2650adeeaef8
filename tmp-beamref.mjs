import { Matrix, EigenvalueDecomposition, solve } from 'ml-matrix';
const N = 80, L = 2, EI = 2, kf = 50, k3 = 10, h = L / N, n = N - 1;
const D2 = Matrix.zeros(n, n);
for (let i = 0; i < n; i++) { D2.set(i, i, -2 / h / h); if (i > 0) D2.set(i, i - 1, 1 / h / h); if (i < n - 1) D2.set(i, i + 1, 1 / h / h); }
const D4 = D2.mmul(D2);
function basis(parity) { const cols = [];
  for (let i = 0; i < n; i++) { const j = n - 1 - i; if (j < i) break; const v = new Array(n).fill(0);
    if (j === i) { if (parity < 0) continue; v[i] = 1; } else { v[i] = Math.SQRT1_2; v[j] = parity * Math.SQRT1_2; } cols.push(v); }
  return new Matrix(cols).transpose(); }
const Qe = basis(1), Qo = basis(-1);
const F = (w, P) => { const t = D4.mmul(w).mul(-EI).sub(D2.mmul(w).mul(P)); for (let i = 0; i < n; i++) t.set(i, 0, t.get(i, 0) - kf * w.get(i, 0) + k3 * w.get(i, 0) ** 3); return t; };
const J = (w, P) => { const A = D4.clone().mul(-EI).sub(D2.clone().mul(P)); for (let i = 0; i < n; i++) A.set(i, i, A.get(i, i) - kf + 3 * k3 * w.get(i, 0) ** 2); return A; };
// augmented: Q^T F(Qa, P) = 0, (Qa)[node] = A
function solveAmp(Q, a, P, node, A) { const m = Q.columns;
  for (let k = 0; k < 60; k++) { const w = Q.mmul(a); const r = Q.transpose().mmul(F(w, P));
    const M = Matrix.zeros(m + 1, m + 1); M.setSubMatrix(Q.transpose().mmul(J(w, P)).mmul(Q), 0, 0);
    const fp = Q.transpose().mmul(D2.mmul(w)).mul(-1); for (let i = 0; i < m; i++) M.set(i, m, fp.get(i, 0));
    for (let j = 0; j < m; j++) M.set(m, j, Q.get(node, j));
    const rhs = Matrix.zeros(m + 1, 1); rhs.setSubMatrix(r, 0, 0); rhs.set(m, 0, w.get(node, 0) - A);
    const d = solve(M, rhs); for (let i = 0; i < m; i++) a.set(i, 0, a.get(i, 0) - d.get(i, 0)); P -= d.get(m, 0);
    if (process.env.DBG) console.log(k, d.norm()); if (d.norm() < 1e-11 * (1 + a.norm() + Math.abs(P))) return { a, P }; }
  throw new Error('newton'); }
function eigs(Q, w, P) { const A = Q.transpose().mmul(J(w, P)).mmul(Q); return new EigenvalueDecomposition(A).realEigenvalues.sort((x, y) => y - x); }
const x = (i) => (i + 1) * h;
if (false) for (const [name, Q, other, mode, node] of [['mode1', Qe, Qo, 1, 39], ['mode2', Qo, Qe, 2, 19]]) {
  let a = Q.transpose().mmul(Matrix.columnVector(Array.from({ length: n }, (_, i) => 0.01 * Math.sin(mode * Math.PI * x(i) / L))));
  let P = 25;
  for (let A = 0.01; A < 1.2; A += 0.02) {
    ({ a, P } = solveAmp(Q, a, P, node, A));
    const w = Q.mmul(a);
    const eo = eigs(other, w, P).slice(0, 3), es = eigs(Q, w, P).slice(0, 3);
    console.log(name, A.toFixed(3), 'P', P.toFixed(5), 'same', es.map(v=>v.toFixed(4)).join(' '), 'other', eo.map(v=>v.toFixed(4)).join(' '));
  }
}
function crit(Q, other, node, A, state) { ({ a: state.a, P: state.P } = solveAmp(Q, state.a, state.P, node, A)); const w = Q.mmul(state.a); const e = eigs(other, w, state.P); let best = e[0]; for (const v of e) if (Math.abs(v) < Math.abs(best)) best = v; return best; }
for (const [name, Q, other, mode, node, A0, A1] of [['mode1', Qe, Qo, 1, 39, 0.51, 0.53], ['mode2', Qo, Qe, 2, 19, 0.27, 0.29]]) {
  const st = { a: Q.transpose().mmul(Matrix.columnVector(Array.from({ length: n }, (_, i) => A0 * Math.sin(mode * Math.PI * x(i) / L)))), P: 24.5 };
  let a = A0, b = A1, fa = crit(Q, other, node, a, st), fb = crit(Q, other, node, b, st);
  for (let k = 0; k < 30 && Math.abs(b - a) > 1e-15; k++) { const c = b - fb * (b - a) / (fb - fa); a = b; fa = fb; b = c; fb = crit(Q, other, node, b, st); }
  console.log('REF', name, 'A', b, 'P', st.P.toPrecision(12), 'eig', fb);
}
