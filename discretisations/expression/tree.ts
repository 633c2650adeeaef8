/**
 * The expression compiler's own small tree (./compile.ts, step 3): numbers, input slots, the
 * arithmetic operators and the accepted functions; converted from a checked mathjs tree (or a
 * mathjs derivative of one), tidied (constant folding, x*1, x+0, 0*x, x^1, double negation: a
 * derivative that tidies to 0 is a structural zero), evaluated directly, and measured.
 */
import { CONSTANTS, ExpressionError } from './vocabulary.js';
import type { MjNode } from './parse.js';

export type Expr =
  | { readonly k: 'num'; readonly v: number }
  | { readonly k: 'sym'; readonly slot: number }
  | { readonly k: 'add' | 'sub' | 'mul' | 'div' | 'pow'; readonly a: Expr; readonly b: Expr }
  | { readonly k: 'neg'; readonly a: Expr }
  | { readonly k: 'fn'; readonly name: string; readonly args: readonly Expr[] };

export const num = (v: number): Expr => ({ k: 'num', v });
export const ZERO = num(0);
const ONE = num(1);

export const isNum = (e: Expr, v?: number): e is { k: 'num'; v: number } => e.k === 'num' && (v === undefined || e.v === v);

/** Real-valued evaluation of the accepted functions (also used for constant folding). */
const MATH: Readonly<Record<string, (...x: number[]) => number>> = {
  exp: Math.exp,
  log: Math.log,
  log10: Math.log10,
  sqrt: Math.sqrt,
  sin: Math.sin,
  cos: Math.cos,
  tan: Math.tan,
  sec: (t) => 1 / Math.cos(t),
  csc: (t) => 1 / Math.sin(t),
  cot: (t) => 1 / Math.tan(t),
  asin: Math.asin,
  acos: Math.acos,
  atan: Math.atan,
  acot: (t) => Math.atan(1 / t),
  sinh: Math.sinh,
  cosh: Math.cosh,
  tanh: Math.tanh,
  sech: (t) => 1 / Math.cosh(t),
  csch: (t) => 1 / Math.sinh(t),
  coth: (t) => 1 / Math.tanh(t),
  asinh: Math.asinh,
  acosh: Math.acosh,
  atanh: Math.atanh,
  // internal only (never accepted in user text): the sizes of summands (see `magnitudeOf`)
  abs: Math.abs,
};

/** Convert a checked mathjs tree (or a mathjs derivative of one) to the internal tree. */
export function toExpr(n: MjNode, slots: ReadonlyMap<string, number>): Expr {
  switch (n.type) {
    case 'ConstantNode':
      return num(n.value as number);
    case 'SymbolNode': {
      const s = n.name as string;
      const slot = slots.get(s);
      if (slot !== undefined) return { k: 'sym', slot };
      if (Object.hasOwn(CONSTANTS, s)) return num(CONSTANTS[s]);
      throw new ExpressionError(`internal: symbol '${s}' has no slot`);
    }
    case 'ParenthesisNode':
      return toExpr(n.content as MjNode, slots);
    case 'OperatorNode': {
      const args = (n.args ?? []).map((a) => toExpr(a, slots));
      switch (n.fn) {
        case 'unaryMinus':
          return { k: 'neg', a: args[0] };
        case 'unaryPlus':
          return args[0];
        case 'add':
          return args.reduce((x, y) => ({ k: 'add', a: x, b: y }));
        case 'multiply':
          return args.reduce((x, y) => ({ k: 'mul', a: x, b: y }));
        case 'subtract':
          return { k: 'sub', a: args[0], b: args[1] };
        case 'divide':
          return { k: 'div', a: args[0], b: args[1] };
        case 'pow':
          return { k: 'pow', a: args[0], b: args[1] };
        default:
          throw new ExpressionError(`internal: operator '${String(n.fn)}' reached the compiler`);
      }
    }
    case 'FunctionNode': {
      const name = (n.fn as { name: string }).name;
      const args = (n.args ?? []).map((a) => toExpr(a, slots));
      if (name === 'pow') return { k: 'pow', a: args[0], b: args[1] };
      if (name === 'log' && args.length === 2) {
        return { k: 'div', a: { k: 'fn', name: 'log', args: [args[0]] }, b: { k: 'fn', name: 'log', args: [args[1]] } };
      }
      if (!Object.hasOwn(MATH, name)) throw new ExpressionError(`internal: function '${name}' reached the compiler`);
      return { k: 'fn', name, args };
    }
    default:
      throw new ExpressionError(`internal: node type ${n.type} reached the compiler`);
  }
}

/** Light, value-preserving tidying: constant folding and removal of neutral elements. */
export function tidy(e: Expr): Expr {
  switch (e.k) {
    case 'num':
    case 'sym':
      return e;
    case 'neg': {
      const a = tidy(e.a);
      if (isNum(a)) return num(-a.v);
      if (a.k === 'neg') return a.a;
      return { k: 'neg', a };
    }
    case 'fn': {
      const args = e.args.map(tidy);
      if (args.every((x) => x.k === 'num')) return num(MATH[e.name](...args.map((x) => (x as { v: number }).v)));
      return { k: 'fn', name: e.name, args };
    }
    default: {
      const a = tidy(e.a);
      const b = tidy(e.b);
      if (isNum(a) && isNum(b)) {
        switch (e.k) {
          case 'add': return num(a.v + b.v);
          case 'sub': return num(a.v - b.v);
          case 'mul': return num(a.v * b.v);
          case 'div': return num(a.v / b.v);
          case 'pow': return num(Math.pow(a.v, b.v));
        }
      }
      switch (e.k) {
        case 'add':
          if (isNum(a, 0)) return b;
          if (isNum(b, 0)) return a;
          if (b.k === 'neg') return tidy({ k: 'sub', a, b: b.a });
          break;
        case 'sub':
          if (isNum(b, 0)) return a;
          if (isNum(a, 0)) return tidy({ k: 'neg', a: b });
          if (b.k === 'neg') return { k: 'add', a, b: b.a };
          break;
        case 'mul':
          if (isNum(a, 0) || isNum(b, 0)) return ZERO;
          if (isNum(a, 1)) return b;
          if (isNum(b, 1)) return a;
          if (isNum(a, -1)) return tidy({ k: 'neg', a: b });
          if (isNum(b, -1)) return tidy({ k: 'neg', a });
          if (a.k === 'neg' && b.k === 'neg') return { k: 'mul', a: a.a, b: b.a };
          if (a.k === 'neg') return { k: 'neg', a: { k: 'mul', a: a.a, b } };
          if (b.k === 'neg') return { k: 'neg', a: { k: 'mul', a, b: b.a } };
          break;
        case 'div':
          if (isNum(a, 0)) return ZERO;
          if (isNum(b, 1)) return a;
          if (isNum(b, -1)) return tidy({ k: 'neg', a });
          if (a.k === 'neg') return { k: 'neg', a: { k: 'div', a: a.a, b } };
          break;
        case 'pow':
          if (isNum(b, 1)) return a;
          if (isNum(b, 0)) return ONE;
          break;
      }
      return { k: e.k, a, b };
    }
  }
}

/** Evaluate an internal tree directly (slow; for tests and one-off values). */
export function evaluateExpr(e: Expr, a: ArrayLike<number>): number {
  switch (e.k) {
    case 'num': return e.v;
    case 'sym': return a[e.slot];
    case 'neg': return -evaluateExpr(e.a, a);
    case 'fn': return MATH[e.name](...e.args.map((x) => evaluateExpr(x, a)));
    case 'add': return evaluateExpr(e.a, a) + evaluateExpr(e.b, a);
    case 'sub': return evaluateExpr(e.a, a) - evaluateExpr(e.b, a);
    case 'mul': return evaluateExpr(e.a, a) * evaluateExpr(e.b, a);
    case 'div': return evaluateExpr(e.a, a) / evaluateExpr(e.b, a);
    case 'pow': return Math.pow(evaluateExpr(e.a, a), evaluateExpr(e.b, a));
  }
}

/** Nodes of an internal tree. */
export function exprSize(e: Expr): number {
  switch (e.k) {
    case 'num':
    case 'sym':
      return 1;
    case 'neg':
      return 1 + exprSize(e.a);
    case 'fn':
      return 1 + e.args.reduce((a, x) => a + exprSize(x), 0);
    default:
      return 1 + exprSize(e.a) + exprSize(e.b);
  }
}
