/**
 * Step 4 of the expression compiler (./compile.ts): JavaScript from internal trees (./tree.ts),
 * fully parenthesised, integer powers as products, repeated sub-expressions computed once across
 * all the outputs of one generated function; no user text reaches the source (symbols are our own
 * local names read from a flat input array, numbers are printed from their values).
 */
import type { Expr } from './tree.js';

/** Integer powers up to this magnitude become products; larger ones call Math.pow. */
const MAX_PRODUCT_POWER = 8;

/** JavaScript source for each function of one argument `A`. */
const JS_FUNCTION: Readonly<Record<string, (a: string) => string>> = {
  exp: (a) => `Math.exp(${a})`,
  log: (a) => `Math.log(${a})`,
  log10: (a) => `Math.log10(${a})`,
  sqrt: (a) => `Math.sqrt(${a})`,
  sin: (a) => `Math.sin(${a})`,
  cos: (a) => `Math.cos(${a})`,
  tan: (a) => `Math.tan(${a})`,
  sec: (a) => `(1 / Math.cos(${a}))`,
  csc: (a) => `(1 / Math.sin(${a}))`,
  cot: (a) => `(1 / Math.tan(${a}))`,
  asin: (a) => `Math.asin(${a})`,
  acos: (a) => `Math.acos(${a})`,
  atan: (a) => `Math.atan(${a})`,
  acot: (a) => `Math.atan(1 / ${a})`,
  sinh: (a) => `Math.sinh(${a})`,
  cosh: (a) => `Math.cosh(${a})`,
  tanh: (a) => `Math.tanh(${a})`,
  sech: (a) => `(1 / Math.cosh(${a}))`,
  csch: (a) => `(1 / Math.sinh(${a}))`,
  coth: (a) => `(1 / Math.tanh(${a}))`,
  asinh: (a) => `Math.asinh(${a})`,
  acosh: (a) => `Math.acosh(${a})`,
  atanh: (a) => `Math.atanh(${a})`,
  abs: (a) => `Math.abs(${a})`,
};

function literal(v: number): string {
  if (Number.isNaN(v)) return 'NaN';
  if (v === Infinity) return 'Infinity';
  if (v === -Infinity) return '(-Infinity)';
  if (v < 0 || Object.is(v, -0)) return `(-${String(-v)})`;
  return String(v);
}

/**
 * Generates the body of one function computing several outputs from the input slots, with
 * repeated sub-expressions computed once.
 */
class Generator {
  private readonly count = new Map<string, number>();
  private readonly keys = new Map<Expr, string>();
  private readonly temps = new Map<string, string>();
  private readonly lines: string[] = [];
  private readonly used = new Set<number>();

  /** `access(slot)` is the JavaScript that reads input slot `slot` (e.g. `a[3]`, `q[1]`). */
  constructor(private readonly access: (slot: number) => string = (slot) => `a[${slot}]`) {}

  private key(e: Expr): string {
    let k = this.keys.get(e);
    if (k !== undefined) return k;
    switch (e.k) {
      case 'num': k = `#${e.v}`; break;
      case 'sym': k = `$${e.slot}`; break;
      case 'neg': k = `neg(${this.key(e.a)})`; break;
      case 'fn': k = `${e.name}(${e.args.map((x) => this.key(x)).join(',')})`; break;
      default: k = `${e.k}(${this.key(e.a)},${this.key(e.b)})`;
    }
    this.keys.set(e, k);
    return k;
  }

  /** Count how many distinct parents use each compound sub-expression (first pass). */
  note(e: Expr): void {
    if (e.k === 'num' || e.k === 'sym') return;
    const k = this.key(e);
    const c = this.count.get(k) ?? 0;
    this.count.set(k, c + 1);
    if (c > 0) return; // children already counted through the first occurrence
    if (e.k === 'neg') this.note(e.a);
    else if (e.k === 'fn') e.args.forEach((x) => this.note(x));
    else {
      this.note(e.a);
      this.note(e.b);
      // an integer power's base is read several times: give it a temporary if compound
      if (e.k === 'pow' && Math.abs(this.productPower(e.b) ?? 0) >= 2) this.count.set(this.key(e.a), 2);
    }
  }

  private productPower(b: Expr): number | undefined {
    if (b.k === 'num' && Number.isInteger(b.v) && b.v !== 0 && Math.abs(b.v) <= MAX_PRODUCT_POWER) return b.v;
    return undefined;
  }

  /** JavaScript expression for e (second pass); compound repeated parts become temporaries. */
  emit(e: Expr): string {
    if (e.k === 'num') return literal(e.v);
    if (e.k === 'sym') {
      this.used.add(e.slot);
      return `s${e.slot}`;
    }
    const k = this.key(e);
    const t = this.temps.get(k);
    if (t !== undefined) return t;
    let code: string;
    switch (e.k) {
      case 'neg':
        code = `(-${this.emit(e.a)})`;
        break;
      case 'fn':
        code = JS_FUNCTION[e.name](e.args.map((x) => this.emit(x)).join(', '));
        break;
      case 'add':
        code = `(${this.emit(e.a)} + ${this.emit(e.b)})`;
        break;
      case 'sub':
        code = `(${this.emit(e.a)} - ${this.emit(e.b)})`;
        break;
      case 'mul':
        code = `(${this.emit(e.a)} * ${this.emit(e.b)})`;
        break;
      case 'div':
        code = `(${this.emit(e.a)} / ${this.emit(e.b)})`;
        break;
      case 'pow': {
        const n = this.productPower(e.b);
        const base = this.emit(e.a);
        if (n !== undefined) {
          const prod = Array.from({ length: Math.abs(n) }, () => base).join(' * ');
          code = n > 0 ? (Math.abs(n) === 1 ? base : `(${prod})`) : `(1 / ${Math.abs(n) === 1 ? base : `(${prod})`})`;
        } else {
          code = `Math.pow(${base}, ${this.emit(e.b)})`;
        }
        break;
      }
    }
    if ((this.count.get(k) ?? 0) > 1) {
      const name = `t${this.temps.size}`;
      this.temps.set(k, name);
      this.lines.push(`const ${name} = ${code};`);
      return name;
    }
    return code;
  }

  /** Statement assigning `target` (e.g. `o[3]`). */
  assign(target: string, e: Expr): void {
    const code = this.emit(e);
    this.lines.push(`${target} = ${code};`);
  }

  /** Statements: symbol loads, then the computations and assignments. */
  statements(): string[] {
    const loads = [...this.used].sort((a, b) => a - b).map((s) => `const s${s} = ${this.access(s)};`);
    return [...loads, ...this.lines];
  }
}

/** Function writing outputs o[i] = exprs[i](a) for each i. */
export type SlotFunction = (a: Float64Array, o: Float64Array) => void;

/**
 * Statements assigning `target(i) = exprs[i]` for every i, reading input slots through
 * `access`, with repeated sub-expressions computed once across all the outputs.
 */
export function generateStatements(exprs: readonly Expr[], target: (i: number) => string, access?: (slot: number) => string): string[] {
  const g = new Generator(access);
  for (const e of exprs) g.note(e);
  exprs.forEach((e, i) => g.assign(target(i), e));
  return g.statements();
}

/** Generate source and compile `o[i] = exprs[i]` over input slots `a`. */
export function generate(exprs: readonly Expr[]): { fn: SlotFunction; source: string } {
  const source = ['"use strict";', ...generateStatements(exprs, (i) => `o[${i}]`)].join('\n');
  // eslint-disable-next-line @typescript-eslint/no-implied-eval
  const fn = new Function('a', 'o', source) as SlotFunction;
  return { fn, source };
}
