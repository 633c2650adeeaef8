import { readFileSync } from 'node:fs';
import { Matrix, EigenvalueDecomposition } from 'ml-matrix';
const N = 80, L = 2, EI = 2, kf = 50, k3 = 10, h = L / N, n = N - 1;
const D2 = Matrix.zeros(n, n);
for (let i = 0; i < n; i++) { D2.set(i, i, -2 / h / h); if (i > 0) D2.set(i, i - 1, 1 / h / h); if (i < n - 1) D2.set(i, i + 1, 1 / h / h); }
const D4 = D2.mmul(D2);
const buf = readFileSync(process.argv[2]); const hl = buf.readUInt16LE(8); const data = new Float64Array(buf.buffer.slice(buf.byteOffset + 10 + hl));
const P = Number(process.argv[3]);
const w = Matrix.columnVector(Array.from(data).slice(1, N));
const F = D4.mmul(w).mul(-EI).sub(D2.mmul(w).mul(P)); for (let i = 0; i < n; i++) F.set(i, 0, F.get(i, 0) - kf * w.get(i, 0) + k3 * w.get(i, 0) ** 3);
const A = D4.clone().mul(-EI).sub(D2.clone().mul(P)); for (let i = 0; i < n; i++) A.set(i, i, A.get(i, i) - kf + 3 * k3 * w.get(i, 0) ** 2);
const e = new EigenvalueDecomposition(A).realEigenvalues.sort((a, b) => Math.abs(a) - Math.abs(b));
console.log('max|F|', Math.max(...F.to1DArray().map(Math.abs)), 'wRMS', Math.sqrt(F.to1DArray().reduce((s,x)=>s+h*x*x,0)), 'eig near 0', e.slice(0, 3));
