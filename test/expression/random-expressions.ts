/**
 * Test helpers: random expression trees (fast-check arbitraries) written both as expression text
 * and as an independent JavaScript evaluator, a fourth-order central difference, and a
 * relative closeness test.
 *
 * The trees stay inside the real domain of every function for symbols in [-1.5, 1.5] (a
 * divisor parameter `beta` in [0.5, 1.5]): divisions and logarithms only see 1 + t²,
 * exponentials see bounded arguments, non-integer powers have positive bases, and integer powers
 * apply to symbols or bounded functions so that values stay moderate and well conditioned.
 */
import fc from 'fast-check';

export interface RandomExpression {
  readonly text: string;
  value(env: Readonly<Record<string, number>>): number;
}

const leaf = (symbols: readonly string[]): fc.Arbitrary<RandomExpression> =>
  fc.oneof(
    { weight: 3, arbitrary: fc.constantFrom(...symbols).map((s): RandomExpression => ({ text: s, value: (env) => env[s] })) },
    {
      weight: 1,
      arbitrary: fc.tuple(fc.constantFrom(...symbols), fc.constantFrom(2, 3)).map(([s, n]): RandomExpression => ({ text: `${s}^${n}`, value: (env) => env[s] ** n })),
    },
    {
      weight: 1,
      arbitrary: fc.constantFrom(0.5, 1, 1.5, 0.25, 0.75).map((c): RandomExpression => ({ text: String(c), value: () => c })),
    },
  );

type Un = (a: RandomExpression) => RandomExpression;
type Bin = (a: RandomExpression, b: RandomExpression) => RandomExpression;

const unary: Un[] = [
  (a) => ({ text: `sin(${a.text})`, value: (e) => Math.sin(a.value(e)) }),
  (a) => ({ text: `cos(${a.text})`, value: (e) => Math.cos(a.value(e)) }),
  (a) => ({ text: `tanh(${a.text})`, value: (e) => Math.tanh(a.value(e)) }),
  (a) => ({ text: `atan(${a.text})`, value: (e) => Math.atan(a.value(e)) }),
  (a) => ({ text: `exp(sin(${a.text}))`, value: (e) => Math.exp(Math.sin(a.value(e))) }),
  (a) => ({ text: `exp(-(${a.text})^2)`, value: (e) => Math.exp(-(a.value(e) ** 2)) }),
  (a) => ({ text: `sqrt(1 + (${a.text})^2)`, value: (e) => Math.sqrt(1 + a.value(e) ** 2) }),
  (a) => ({ text: `log(1 + (${a.text})^2)`, value: (e) => Math.log(1 + a.value(e) ** 2) }),
  (a) => ({ text: `sin(${a.text})^2`, value: (e) => Math.sin(a.value(e)) ** 2 }),
  (a) => ({ text: `tanh(${a.text})^3`, value: (e) => Math.tanh(a.value(e)) ** 3 }),
  (a) => ({ text: `(1 + sin(${a.text})^2)^-2`, value: (e) => (1 + Math.sin(a.value(e)) ** 2) ** -2 }),
  (a) => ({ text: `-(${a.text})`, value: (e) => -a.value(e) }),
  (a) => ({ text: `(${a.text}) / beta`, value: (e) => a.value(e) / e.beta }),
];

const binary: Bin[] = [
  (a, b) => ({ text: `(${a.text}) + (${b.text})`, value: (e) => a.value(e) + b.value(e) }),
  (a, b) => ({ text: `(${a.text}) - (${b.text})`, value: (e) => a.value(e) - b.value(e) }),
  (a, b) => ({ text: `(${a.text}) * (${b.text})`, value: (e) => a.value(e) * b.value(e) }),
  (a, b) => ({ text: `(${a.text}) / (1 + (${b.text})^2)`, value: (e) => a.value(e) / (1 + b.value(e) ** 2) }),
  (a, b) => ({ text: `(1 + (${a.text})^2)^sin(${b.text})`, value: (e) => Math.pow(1 + a.value(e) ** 2, Math.sin(b.value(e))) }),
];

/** Random expression over `symbols` of at most `depth` operator levels. */
export function randomExpression(symbols: readonly string[], depth: number): fc.Arbitrary<RandomExpression> {
  if (depth <= 0) return leaf(symbols);
  const sub = randomExpression(symbols, depth - 1);
  return fc.oneof(
    { weight: 1, arbitrary: leaf(symbols) },
    { weight: 2, arbitrary: fc.tuple(fc.constantFrom(...unary), sub).map(([f, a]) => f(a)) },
    { weight: 3, arbitrary: fc.tuple(fc.constantFrom(...binary), sub, sub).map(([f, a, b]) => f(a, b)) },
  );
}

/**
 * Fourth-order central difference (Richardson combination of steps h and 2h):
 * f'(t) ≈ [8(f(t+h) − f(t−h)) − (f(t+2h) − f(t−2h))] / (12h), truncation error O(h⁴).
 */
export function richardsonDerivative(f: (t: number) => number, t: number, relStep = 2e-4): number {
  const h = relStep * Math.max(1, Math.abs(t));
  return (8 * (f(t + h) - f(t - h)) - (f(t + 2 * h) - f(t - 2 * h))) / (12 * h);
}

/** Plain second-order central difference (f(t+h) − f(t−h)) / 2h. */
export function centralDerivative(f: (t: number) => number, t: number, relStep = 1e-6): number {
  const h = relStep * Math.max(1, Math.abs(t));
  return (f(t + h) - f(t - h)) / (2 * h);
}

/** |a − b| ≤ rel · max(|a|, |b|, 1): relative error, absolute below magnitude 1. */
export function closeTo(a: number, b: number, rel: number): boolean {
  if (!Number.isFinite(a) || !Number.isFinite(b)) return false;
  return Math.abs(a - b) <= rel * Math.max(Math.abs(a), Math.abs(b), 1);
}
