/**
 * The expression compiler on its own: values against mathjs's own evaluator (a general-purpose
 * reference library) and against hand-written formulas, derivatives against central finite
 * differences and hand-derived formulas, structural zeros, generated code shape, and the
 * one-line error messages.
 */
import { describe, expect, test } from 'vitest';
import fc from 'fast-check';
import { evaluate, parse } from 'mathjs';
import {
  ACCEPTED_FUNCTIONS,
  compileReaction,
  compileScalar,
  ExpressionError,
  type CompiledReaction,
  mathTree,
  printMath,
} from '../../discretisations/expression/compile.js';
import { randomExpression, richardsonDerivative, closeTo } from './random-expressions.js';

const FIELDS = ['u', 'v', 'w'];
const PARAMS = ['alpha', 'beta'];
const SYMBOLS = [...FIELDS, ...PARAMS, 'x', 'y'];

/** Inputs in slot order for a compiled system: fields, parameters, x, y, z. */
function slots(c: CompiledReaction, env: Record<string, number>): Float64Array {
  const a = new Float64Array(c.slots);
  c.fields.forEach((f, i) => (a[i] = env[f]));
  c.parameters.forEach((p, k) => (a[c.parameterSlot + k] = env[p]));
  ['x', 'y', 'z'].forEach((s, d) => (a[c.coordinateSlot + d] = env[s] ?? 0));
  return a;
}

const envArb = fc.record({
  u: fc.double({ min: -1.5, max: 1.5, noNaN: true }),
  v: fc.double({ min: -1.5, max: 1.5, noNaN: true }),
  w: fc.double({ min: -1.5, max: 1.5, noNaN: true }),
  alpha: fc.double({ min: -1.5, max: 1.5, noNaN: true }),
  beta: fc.double({ min: 0.5, max: 1.5, noNaN: true }),
  x: fc.double({ min: 0, max: 1, noNaN: true }),
  y: fc.double({ min: 0, max: 1, noNaN: true }),
});

describe('values', () => {
  test('random expressions evaluate as mathjs evaluates them', () => {
    fc.assert(
      fc.property(randomExpression(SYMBOLS, 4), randomExpression(SYMBOLS, 3), randomExpression(SYMBOLS, 3), envArb, (eu, ev, ew, env) => {
        const c = compileReaction({ fields: FIELDS, parameters: PARAMS, reaction: { u: eu.text, v: ev.text, w: ew.text } });
        const a = slots(c, env);
        const o = new Float64Array(3);
        c.residual(a, o);
        [eu, ev, ew].forEach((e, i) => {
          // reference: mathjs's own evaluator on the same text
          const ref = evaluate(e.text, { ...env }) as number;
          expect(typeof ref).toBe('number');
          expect(closeTo(o[i], ref, 1e-12)).toBe(true);
          // and the independent JavaScript reading of the generated tree
          expect(closeTo(o[i], e.value(env), 1e-12)).toBe(true);
        });
      }),
      { numRuns: 200 },
    );
  });

  test('hand-written formulas: Arrhenius source with coordinates and named constants', () => {
    const c = compileReaction({
      fields: ['T'],
      parameters: ['lambda', 'gamma'],
      reaction: { T: 'lambda * exp(T / (1 + T / gamma)) + 2*pi*sin(pi*x)*cos(e*y) - z^2' },
    });
    const env = { T: 0.7, lambda: 1.3, gamma: 20, x: 0.3, y: 0.4, z: 0.25 };
    const o = new Float64Array(1);
    c.residual(slots(c, env), o);
    const ref = 1.3 * Math.exp(0.7 / (1 + 0.7 / 20)) + 2 * Math.PI * Math.sin(Math.PI * 0.3) * Math.cos(Math.E * 0.4) - 0.25 * 0.25;
    expect(o[0]).toBeCloseTo(ref, 14);
    expect(c.usesCoordinates).toBe(true);
  });

  test('a number instead of text is accepted; "0" gives an empty Jacobian row', () => {
    const c = compileReaction({ fields: ['u', 'v'], parameters: [], reaction: { u: 2.5, v: '0' } });
    const o = new Float64Array(2);
    c.residual(new Float64Array(c.slots), o);
    expect([...o]).toEqual([2.5, 0]);
    expect(c.couplingRows.length).toBe(0);
    expect(c.usesCoordinates).toBe(false);
  });
});

describe('derivatives', () => {
  test('random systems: analytic Jacobian and parameter derivatives match central differences', () => {
    fc.assert(
      fc.property(randomExpression(SYMBOLS, 4), randomExpression(SYMBOLS, 4), randomExpression(SYMBOLS, 3), envArb, (eu, ev, ew, env) => {
        const c = compileReaction({ fields: FIELDS, parameters: PARAMS, reaction: { u: eu.text, v: ev.text, w: ew.text } });
        const a = slots(c, env);
        const jac = new Float64Array(c.couplingRows.length);
        c.jacobian(a, jac);
        const dense = FIELDS.map(() => new Float64Array(FIELDS.length));
        for (let q = 0; q < jac.length; q++) dense[c.couplingRows[q]][c.couplingCols[q]] = jac[q];
        const o = new Float64Array(3);
        const residualAt = (slot: number, t: number, i: number): number => {
          const b = a.slice();
          b[slot] = t;
          c.residual(b, o);
          return o[i];
        };
        for (let i = 0; i < 3; i++) {
          for (let j = 0; j < 3; j++) {
            const fd = richardsonDerivative((t) => residualAt(j, t, i), a[j]);
            expect(closeTo(dense[i][j], fd, 1e-6), `d R_${FIELDS[i]} / d ${FIELDS[j]}: ${dense[i][j]} vs ${fd}`).toBe(true);
          }
        }
        const dp = new Float64Array(3);
        PARAMS.forEach((p, k) => {
          c.parameterDerivative[k](a, dp);
          for (let i = 0; i < 3; i++) {
            const fd = richardsonDerivative((t) => residualAt(c.parameterSlot + k, t, i), a[c.parameterSlot + k]);
            expect(closeTo(dp[i], fd, 1e-6), `d R_${FIELDS[i]} / d ${p}: ${dp[i]} vs ${fd}`).toBe(true);
          }
        });
      }),
      { numRuns: 150 },
    );
  });

  test('Gray-Scott kinetics: derivatives equal the hand-derived formulas', () => {
    const c = compileReaction({
      fields: ['u', 'v'],
      parameters: ['F', 'k'],
      reaction: { u: '-u*v^2 + F*(1 - u)', v: 'u*v^2 - (F + k)*v' },
    });
    expect([...c.couplingRows]).toEqual([0, 0, 1, 1]);
    expect([...c.couplingCols]).toEqual([0, 1, 0, 1]);
    fc.assert(
      fc.property(fc.double({ min: -2, max: 2, noNaN: true }), fc.double({ min: -2, max: 2, noNaN: true }), fc.double({ min: 0, max: 0.1, noNaN: true }), fc.double({ min: 0, max: 0.1, noNaN: true }), (u, v, F, k) => {
        const a = Float64Array.of(u, v, F, k, 0, 0, 0);
        const r = new Float64Array(2);
        const j = new Float64Array(4);
        const pF = new Float64Array(2);
        const pk = new Float64Array(2);
        c.residual(a, r);
        c.jacobian(a, j);
        c.parameterDerivative[0](a, pF);
        c.parameterDerivative[1](a, pk);
        const ok = (x: number, y: number): boolean => closeTo(x, y, 1e-14);
        return (
          ok(r[0], -u * v * v + F * (1 - u)) && ok(r[1], u * v * v - (F + k) * v) &&
          ok(j[0], -v * v - F) && ok(j[1], -2 * u * v) && ok(j[2], v * v) && ok(j[3], 2 * u * v - (F + k)) &&
          ok(pF[0], 1 - u) && ok(pF[1], -v) && pk[0] === 0 && ok(pk[1], -v)
        );
      }),
    );
  });

  test('structural zeros are left out of the coupling pattern', () => {
    const c = compileReaction({
      fields: ['a', 'b', 'c'],
      parameters: ['p', 'q'],
      reaction: { a: 'p*b + c - c', b: 'exp(a) + q*0*b', c: 'sin(x)' },
    });
    // a depends on b only (c - c cancels), b on a only (q*0*b is zero), c on nothing
    expect([...c.couplingRows]).toEqual([0, 1]);
    expect([...c.couplingCols]).toEqual([1, 0]);
    expect([...c.parameterFields[0]]).toEqual([0]);
    expect([...c.parameterFields[1]]).toEqual([]);
  });

  test('every accepted function differentiates and matches central differences', () => {
    // arguments kept inside each function's real domain
    const arg: Record<string, string> = { acosh: '(2 + u^2)', acoth: '(2 + u^2)', atanh: '(u/3)', asin: '(u/3)', acos: '(u/3)', log: '(2 + u^2)', log10: '(2 + u^2)', sqrt: '(2 + u^2)', csc: '(1 + u^2)', cot: '(1 + u^2)', csch: '(1 + u^2)', coth: '(1 + u^2)' };
    for (const f of ACCEPTED_FUNCTIONS) {
      const text = f === 'pow' ? 'pow(2 + u^2, 0.3*u)' : f === 'log' ? 'log(2 + u^2, 3 + u)' : `${f}(${arg[f] ?? '(0.4*u + 0.1)'})`;
      const c = compileReaction({ fields: ['u'], parameters: [], reaction: { u: text } });
      for (const u of [-0.8, 0.3, 1.1]) {
        const a = Float64Array.of(u, 0, 0, 0);
        const o = new Float64Array(1);
        c.jacobian(a, o);
        const fd = richardsonDerivative((t) => {
          const r = new Float64Array(1);
          c.residual(Float64Array.of(t, 0, 0, 0), r);
          return r[0];
        }, u);
        expect(closeTo(o[0], fd, 1e-7), `${text} at u = ${u}: ${o[0]} vs ${fd}`).toBe(true);
        // and the value against mathjs's evaluator
        const r = new Float64Array(1);
        c.residual(a, r);
        expect(closeTo(r[0], evaluate(text, { u }) as number, 1e-13), text).toBe(true);
      }
    }
  });

  test('compileScalar: value and gradient in the given symbols', () => {
    const s = compileScalar('Du0 * (1 + theta^2)', "diffusion for field 'u'", ['Du0', 'theta']);
    expect(s.value([2, 3])).toBe(20);
    expect(s.gradient([2, 3], 0)).toBe(10);
    expect(s.gradient([2, 3], 1)).toBe(12);
    const t = compileScalar(0.05, "diffusion for field 'v'", ['Du0']);
    expect(t.constant).toBe(true);
    expect(t.value([7])).toBe(0.05);
    expect(t.gradient([7], 0)).toBe(0);
  });
});

describe('generated code', () => {
  test('integer powers are products and repeated parts are computed once', () => {
    const c = compileReaction({ fields: ['u', 'v'], parameters: ['k'], reaction: { u: 'v^2 * u^3 + exp(u*v) / exp(u*v)^2', v: 'u^-2 + k^2.5' } });
    expect(c.sources.residual).toContain('s1 * s1');
    expect(c.sources.residual).toContain('s0 * s0 * s0');
    expect(c.sources.residual).toContain('1 / (s0 * s0)');
    expect(c.sources.residual).toContain('Math.pow(s2, 2.5)');
    expect(c.sources.residual.match(/Math\.exp/g)?.length).toBe(1);
    expect(c.sources.residual).not.toMatch(/\b[uvk]\b/);
  });

  test('user text never reaches the generated source', () => {
    const c = compileReaction({ fields: ['constructor', 'toString'], parameters: ['hasOwnProperty'], reaction: { constructor: 'toString * hasOwnProperty', toString: '1' } });
    const all = [c.sources.residual, c.sources.jacobian, ...c.sources.parameter].join('\n');
    expect(all).not.toMatch(/constructor|toString|hasOwnProperty/);
    const o = new Float64Array(2);
    c.residual(Float64Array.of(1, 3, 2, 0, 0, 0), o);
    expect([...o]).toEqual([6, 1]);
  });
});

describe('errors name the field and the offending text on one line', () => {
  const base = { fields: ['u', 'v'], parameters: ['F', 'k'] };
  const cases: [string, Record<string, unknown>, RegExp][] = [
    ['syntax error', { u: 'u*', v: 'v' }, /^reaction for field 'u': syntax error in "u\*": Unexpected end of expression/],
    ['unknown symbol', { u: 'u*q', v: 'v' }, /^reaction for field 'u': unknown symbol 'q' in "u\*q" \(accepted: u, v, F, k, x, y, z; constants pi, e\)$/],
    ['unknown function', { u: 'u', v: 'foo(v)' }, /^reaction for field 'v': unknown function 'foo' in "foo\(v\)" \(accepted functions: exp, log/],
    ['wrongly differentiated function', { u: 'acoth(u)', v: 'v' }, /^reaction for field 'u': the function 'acoth' is not accepted because its symbolic derivative is not reliable in "acoth\(u\)"/],
    ['non-differentiable function', { u: 'abs(u)', v: 'v' }, /^reaction for field 'u': the function 'abs' is not accepted because it has no derivative everywhere in "abs\(u\)"/],
    ['min', { u: 'u', v: 'min(u, v)' }, /^reaction for field 'v': the function 'min' is not accepted because it has no derivative everywhere/],
    ['wrong argument count', { u: 'exp(u, v)', v: 'v' }, /^reaction for field 'u': the function 'exp' takes 1 argument, found 2 in "exp\(u, v\)"$/],
    ['conditional', { u: 'u > 0 ? u : 0', v: 'v' }, /^reaction for field 'u': conditional expressions .* in "u > 0 \? u : 0"$/],
    ['comparison', { u: 'u', v: 'u == v' }, /^reaction for field 'v': the operator '==' is not accepted in "u == v" \(accepted: \+ - \* \/ \^\)$/],
    ['assignment', { u: 'F = 2', v: 'v' }, /^reaction for field 'u': assignments are not accepted/],
    ['several expressions', { u: 'u\nv', v: 'v' }, /^reaction for field 'u': expected a single expression, found several in "u\\nv"$/],
    ['string constant', { u: '"abc"', v: 'v' }, /^reaction for field 'u': the value "abc" is not a number/],
    ['huge number', { u: '1e400*u', v: 'v' }, /^reaction for field 'u': the number Infinity is out of range/],
    ['factorial', { u: 'u!', v: 'v' }, /^reaction for field 'u': the operator '!' is not accepted/],
    ['missing reaction', { u: 'u' }, /^reaction for field 'v': missing \(give an expression for every field; write 0 for none\)$/],
    ['unknown field', { u: 'u', v: 'v', w: 'w' }, /^reaction given for unknown field 'w' \(fields: u, v\)$/],
    ['empty', { u: '  ', v: 'v' }, /^reaction for field 'u': the expression is empty$/],
    ['not text', { u: ['u'], v: 'v' }, /^reaction for field 'u': expected an expression \(text or number\), found object$/],
    ['symbol used as a function', { u: 'F(u)', v: 'v' }, /^reaction for field 'u': 'F' is a symbol, not a function/],
    ['function used as a symbol', { u: 'exp*u', v: 'v' }, /^reaction for field 'u': the function 'exp' is used without arguments/],
    ['matrix', { u: '[u, v]', v: 'v' }, /^reaction for field 'u': '\[u, v\]' is not accepted \(a array expression\)/],
  ];
  for (const [what, reaction, pattern] of cases) {
    test(what, () => {
      let err: unknown;
      try {
        compileReaction({ ...base, reaction });
      } catch (e) {
        err = e;
      }
      expect(err).toBeInstanceOf(ExpressionError);
      const msg = (err as Error).message;
      expect(msg).not.toContain('\n');
      expect(msg).toMatch(pattern);
    });
  }

  test('bad names', () => {
    expect(() => compileReaction({ fields: ['x'], parameters: [], reaction: { x: '1' } })).toThrow(/^field name 'x' is reserved in expressions/);
    expect(() => compileReaction({ fields: ['u'], parameters: ['exp'], reaction: { u: '1' } })).toThrow(/^parameter name 'exp' is reserved/);
    expect(() => compileReaction({ fields: ['u'], parameters: ['u'], reaction: { u: '1' } })).toThrow(/^'u' is both a field and a parameter name$/);
    expect(() => compileReaction({ fields: ['u', 'u'], parameters: [], reaction: { u: '1' } })).toThrow(/^field 'u' is named twice$/);
    expect(() => compileReaction({ fields: ['2u'], parameters: [], reaction: { '2u': '1' } })).toThrow(/^field name "2u" is not usable in expressions/);
    expect(() => compileReaction({ fields: [], parameters: [], reaction: {} })).toThrow(/at least one field/);
  });
});

describe('size limits: nesting, nodes, derivative growth (refused in one short line naming the limit)', () => {
  const one = (u: string): CompiledReaction => compileReaction({ fields: ['u'], parameters: ['lambda'], reaction: { u } });
  const refusal = (u: string): string => {
    try {
      one(u);
    } catch (e) {
      expect(e).toBeInstanceOf(ExpressionError);
      const msg = (e as Error).message;
      expect(msg).not.toContain('\n');
      expect(msg.length).toBeLessThan(260);
      return msg;
    }
    throw new Error('expected a refusal');
  };
  const value = (c: CompiledReaction, u: number, lambda = 0.7): number => {
    const o = new Float64Array(c.fields.length);
    c.residual(Float64Array.from([u, lambda, 0, 0, 0]), o);
    return o[0];
  };
  const jacobian = (c: CompiledReaction, u: number, lambda = 0.7): number => {
    const o = new Float64Array(c.couplingRows.length);
    c.jacobian(Float64Array.from([u, lambda, 0, 0, 0]), o);
    return o[0];
  };

  test('a sum of 300 terms compiles: value and derivative against a plain loop and the term-by-term derivative', () => {
    const text = Array.from({ length: 300 }, (_, k) => `${k % 2 ? '-' : '+'} ${k + 1} * sin(${(k + 1) / 100} * u)`).join(' ').slice(2);
    const c = one(text);
    for (const u of [-0.9, 0.3, 1.4]) {
      let v = 0;
      let d = 0;
      for (let k = 0; k < 300; k++) {
        const s = k % 2 ? -1 : 1;
        v += s * (k + 1) * Math.sin(((k + 1) / 100) * u);
        d += s * (k + 1) * ((k + 1) / 100) * Math.cos(((k + 1) / 100) * u);
      }
      // pairwise grouping of the long sum: the same value up to rounding
      expect(closeTo(value(c, u), v, 1e-12)).toBe(true);
      expect(closeTo(jacobian(c, u), d, 1e-12)).toBe(true);
    }
  });

  test('short sums keep their left-to-right order; long ones are grouped pairwise', () => {
    const three = compileReaction({ fields: ['u', 'v', 'w'], parameters: [], reaction: { u: 'u + v + w', v: '0', w: '0' } });
    expect(three.sources.residual).toMatch(/o\[0\] = \(\(s0 \+ s1\) \+ s2\);/);
    const long = one(Array.from({ length: 40 }, () => 'u').join(' - '));
    expect(long.sources.residual).not.toMatch(/\({20}/); // no left-leaning chain 40 deep
    expect(value(long, 0.5)).toBe(0.5 - 39 * 0.5);
  });

  test('a product of 200 factors is refused naming the limit, quickly and without a stack overflow', () => {
    const msg = refusal(Array.from({ length: 200 }, (_, k) => `(u + ${k + 1})`).join(' * '));
    expect(msg).toMatch(/^reaction for field 'u': the (second )?derivative of "\(u \+ 1\) \* \(u \+ 2\).{20,40}\.\.\." with respect to .* is too large \(limit: 10,000 nodes per derivative\)$/);
  });

  test('nesting: 64 levels accepted, 65 refused; 20,000 brackets and 100,000 signs give a short message', () => {
    const linear = (n: number): string => '('.repeat(n) + 'u' + ' + 1)'.repeat(n);
    expect(value(one(linear(64)), 0.5)).toBe(64.5);
    expect(refusal(linear(65))).toMatch(/^reaction for field 'u': brackets nest more than 64 deep in "\(\(\(\(.*\.\.\." \(limit: 64 levels of nesting\)$/);
    expect(refusal('sin('.repeat(100) + 'u' + ')'.repeat(100))).toMatch(/brackets nest more than 64 deep .*\(limit: 64 levels of nesting\)$/);
    expect(refusal('('.repeat(20_000) + 'u' + ')'.repeat(20_000))).toMatch(/\(limit: 64 levels of nesting\)$/);
    expect(refusal('-'.repeat(50_000) + 'u')).toMatch(/nests (more than 64|\d+) deep .*\(limit: 64 levels of nesting\)$/);
    expect(refusal('u^'.repeat(70) + 'u')).toMatch(/the expression nests 70 deep .*\(limit: 64 levels of nesting\)$/);
  });

  test('node count and text length', () => {
    expect(refusal(Array.from({ length: 6000 }, () => 'u').join(' + '))).toMatch(/the expression has 11,999 nodes in .*\(limit: 10,000 nodes per expression\)$/);
    expect(refusal('u + ' + '0'.repeat(100_000))).toMatch(/the text is 100,004 characters long .*\(limit: 100,000 characters\)$/);
  });

  test('derivative growth: sin(sin(...(u)...)) 40 deep is refused at its second derivative', () => {
    expect(refusal('sin('.repeat(40) + 'u' + ')'.repeat(40))).toMatch(/the second derivative of "sin\(sin.*" with respect to 'u' and 'u' is too large \(limit: 10,000 nodes per derivative\)$/);
  });

  test('compileScalar (diffusion, initial) has the same limits', () => {
    expect(() => compileScalar('('.repeat(100) + 'x' + ')'.repeat(100), "initial for field 'u'", ['x'])).toThrow(/^initial for field 'u': brackets nest more than 64 deep .*\(limit: 64 levels of nesting\)$/);
  });

  test('the second-derivative input tree is the tree parsing the printed first derivative gives', () => {
    const names = [...FIELDS, ...PARAMS, 'x', 'y', 'z'];
    fc.assert(
      fc.property(randomExpression(SYMBOLS, 3), (e) => {
        const c = compileReaction({ fields: FIELDS, parameters: PARAMS, reaction: { u: e.text, v: '0', w: '0' }, coordinates: ['x', 'y'] });
        for (const d of c.trees.jacobian) {
          expect(JSON.stringify(mathTree(d, names))).toBe(JSON.stringify(parse(printMath(d, names))));
        }
      }),
      { numRuns: 40 },
    );
  });
});
