/**
 * Expression compiler: user-written formulas (reaction terms, diffusion coefficients, initial
 * states) to plain JavaScript functions.
 *
 * Pipeline, per expression:
 *   1. `parse` with mathjs, then a strict check of the tree: only numbers, the allowed symbols
 *      (fields, parameters, coordinates x y z, constants pi and e), the operators + - * / ^
 *      (unary - and + too) and a list of smooth functions (ACCEPTED_FUNCTIONS). Anything else is
 *      refused with a one-line message naming what the expression is for (e.g. "reaction for
 *      field 'u'"), the offending piece and the expression text.
 *   2. Symbolic derivatives with mathjs `derivative` (simplify off) with respect to every field
 *      and every parameter.
 *   3. Conversion to a small internal tree, light tidying (constant folding, x*1, x+0, 0*x,
 *      x^1, double negation); a derivative that tidies to the constant 0 is a structural zero
 *      and is left out of the Jacobian pattern.
 *   4. Code generation: fully parenthesised JavaScript, integer powers as products (v^2 -> v*v,
 *      u^-2 -> 1/(u*u)), repeated sub-expressions computed once (common sub-expression
 *      elimination across all outputs of one generated function), then `new Function`.
 *
 * Size limits (EXPRESSION_LIMITS, stated in `branchline models`): an expression's text, its
 * nesting (brackets, function calls, powers and signs; a sum or a product of many terms counts as
 * one level) and its node count are checked on the text and the parse tree before anything is
 * differentiated; each derivative's size is bounded before mathjs builds it and checked after.
 * Sums and products of more than LONG_CHAIN terms are regrouped pairwise (balanced), so that
 * their derivatives stay shallow; shorter ones keep their left-to-right order.
 *
 * No user text ever reaches the generated source: symbols become our own local names (s0, s1,
 * ...) read from a flat input array, and numbers are printed from their parsed values. The
 * generated functions allocate nothing per call.
 *
 * Arithmetic is real double precision (JavaScript Math). Outside a function's real domain
 * (log of a negative number, sqrt of a negative number, ...) the value is NaN rather than the
 * complex number mathjs itself would return.
 */
import { createRequire } from 'node:module';
import type * as MathJs from 'mathjs';

/**
 * mathjs is loaded on first use (it takes most of a second to load, and only expression-defined
 * models need it), synchronously through its CommonJS build.
 */
let mathjs: typeof MathJs | undefined;
function math(): typeof MathJs {
  mathjs ??= createRequire(import.meta.url)('mathjs') as typeof MathJs;
  return mathjs;
}
const parse = (text: string) => math().parse(text);
const derivative = (...args: Parameters<typeof MathJs.derivative>) => math().derivative(...args);

// ---------------------------------------------------------------------------------------------
// Limits

/** Bounds on one expression and on each of its derivatives (refused beyond, naming the limit). */
export const EXPRESSION_LIMITS = {
  /** Levels of brackets, function calls, powers and signs (a long sum or product is one level). */
  nesting: 64,
  /** Nodes (numbers, symbols, operators, calls) per expression and per derivative. */
  nodes: 10_000,
  /** Characters of expression text. */
  characters: 100_000,
} as const;

/** The limits in words, for `branchline models` and messages. */
export const expressionLimitsText = `at most ${EXPRESSION_LIMITS.nesting} levels of nesting and ${EXPRESSION_LIMITS.nodes.toLocaleString('en')} nodes per expression and per derivative`;

/** Sums and products of more terms than this are grouped pairwise (see the header). */
const LONG_CHAIN = 32;

// ---------------------------------------------------------------------------------------------
// Vocabulary

/** Smooth functions accepted in expressions, with their argument counts. */
const FUNCTION_ARITY: Readonly<Record<string, readonly number[]>> = {
  exp: [1],
  log: [1, 2],
  log10: [1],
  sqrt: [1],
  pow: [2],
  sin: [1],
  cos: [1],
  tan: [1],
  sec: [1],
  csc: [1],
  cot: [1],
  asin: [1],
  acos: [1],
  atan: [1],
  acot: [1],
  sinh: [1],
  cosh: [1],
  tanh: [1],
  sech: [1],
  csch: [1],
  coth: [1],
  asinh: [1],
  acosh: [1],
  atanh: [1],
};

/** Function names accepted in expressions (all differentiable wherever they are defined). */
export const ACCEPTED_FUNCTIONS: readonly string[] = Object.keys(FUNCTION_ARITY);

/** Functions users might reach for that are refused because a derivative is not available everywhere. */
const NON_DIFFERENTIABLE = new Set([
  'abs', 'sign', 'min', 'max', 'floor', 'ceil', 'round', 'fix', 'mod', 'heaviside', 'atan2',
  'cbrt', 'nthRoot', 'hypot', 'asec', 'acsc', 'acsch', 'asech', 'log2', 'log1p', 'expm1', 'erf',
  'gamma', 'factorial', 'random',
]);

/** Functions refused because mathjs 15.2 differentiates them wrongly (acoth: wrong sign). */
const UNRELIABLE_DERIVATIVE = new Set(['acoth']);

/** Named constants accepted in expressions. */
const CONSTANTS: Readonly<Record<string, number>> = { pi: Math.PI, e: Math.E };
export const ACCEPTED_CONSTANTS: readonly string[] = Object.keys(CONSTANTS);

/** Coordinate symbols, in slot order. */
export const COORDINATES = ['x', 'y', 'z'] as const;

/** Words the expression parser reserves; they cannot be field or parameter names. */
const PARSER_WORDS = new Set(['mod', 'to', 'in', 'and', 'or', 'not', 'xor', 'true', 'false', 'null', 'end', 'i', 'Infinity', 'NaN', 'undefined']);

/** One-line error about an expression or a name used in expressions. */
export class ExpressionError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'ExpressionError';
  }
}

/** The expression text quoted for a message: at most 60 characters of it. */
function quote(text: string): string {
  return JSON.stringify(text.length > 60 ? `${text.slice(0, 57)}...` : text);
}

/**
 * Check a user-chosen field or parameter name: it must read as a single symbol in expressions
 * and must not shadow a coordinate, constant or function. `role` is e.g. "field" or "parameter".
 */
export function checkName(name: string, role: string): void {
  const accepted = 'a letter followed by letters, digits or underscores, not x, y, z, pi, e, a function name or a parser word';
  if (typeof name !== 'string' || !/^[A-Za-z][A-Za-z0-9_]*$/.test(name)) {
    throw new ExpressionError(`${role} name ${quote(String(name))} is not usable in expressions (accepted: ${accepted})`);
  }
  if ((COORDINATES as readonly string[]).includes(name) || Object.hasOwn(CONSTANTS, name) || Object.hasOwn(FUNCTION_ARITY, name) || PARSER_WORDS.has(name)) {
    throw new ExpressionError(`${role} name '${name}' is reserved in expressions (accepted: ${accepted})`);
  }
}

// ---------------------------------------------------------------------------------------------
// Parsing and checking

/** The minimal view of mathjs nodes this module relies on. */
interface MjNode {
  readonly type: string;
  readonly op?: string;
  readonly fn?: string | { name: string };
  readonly name?: string;
  readonly value?: unknown;
  readonly args?: readonly MjNode[];
  readonly content?: MjNode;
  toString(): string;
}

const OPERATORS: Readonly<Record<string, string>> = {
  add: '+',
  subtract: '-',
  multiply: '*',
  divide: '/',
  pow: '^',
  unaryMinus: '-',
  unaryPlus: '+',
};

/**
 * Parse `text` and check it against the accepted vocabulary. `label` says what the expression
 * is for ("reaction for field 'u'"); `symbols` are the names it may use besides pi and e.
 */
export function parseChecked(text: unknown, label: string, symbols: readonly string[]): MjNode {
  if (typeof text === 'number') {
    if (!Number.isFinite(text)) throw new ExpressionError(`${label}: the number ${text} is not finite`);
    text = String(text);
  }
  if (typeof text !== 'string') {
    throw new ExpressionError(`${label}: expected an expression (text or number), found ${text === null ? 'null' : typeof text}`);
  }
  if (text.trim() === '') throw new ExpressionError(`${label}: the expression is empty`);
  const tooLarge = (what: string, limit: string): never => {
    throw new ExpressionError(`${label}: ${what} in ${quote(text as string)} (limit: ${limit})`);
  };
  const { nesting, nodes, characters } = EXPRESSION_LIMITS;
  const levels = `${nesting} levels of nesting`;
  if (text.length > characters) tooLarge(`the text is ${text.length.toLocaleString('en')} characters long`, `${characters.toLocaleString('en')} characters`);
  if (bracketDepth(text) > nesting) tooLarge(`brackets nest more than ${nesting} deep`, levels);
  let root: MjNode;
  try {
    root = parse(text) as unknown as MjNode;
  } catch (err) {
    // the parser recurses per level: a chain of thousands of signs or powers runs out of stack
    if (err instanceof RangeError) return tooLarge(`the expression nests more than ${nesting} deep`, levels);
    const msg = err instanceof Error ? err.message : String(err);
    throw new ExpressionError(`${label}: syntax error in ${quote(text)}: ${oneLine(msg)}`);
  }
  const size = measure(root);
  if (size.nodes > nodes) tooLarge(`the expression has ${size.nodes.toLocaleString('en')} nodes`, `${nodes.toLocaleString('en')} nodes per expression`);
  if (size.nesting > nesting) tooLarge(`the expression nests ${size.nesting} deep`, levels);
  root = balanceChains(root);
  const allowed = new Set(symbols);
  const acceptedSymbols = (): string => {
    const parts = [symbols.length ? symbols.join(', ') : '(none)', 'constants pi, e'];
    return parts.join('; ');
  };
  const fail = (what: string, hint?: string): never => {
    throw new ExpressionError(`${label}: ${what} in ${quote(text as string)}${hint ? ` (${hint})` : ''}`);
  };
  const functionList = `accepted functions: ${ACCEPTED_FUNCTIONS.join(', ')}`;
  const visit = (n: MjNode): void => {
    switch (n.type) {
      case 'ConstantNode': {
        if (typeof n.value !== 'number') fail(`the value ${quote(String(n.value))} is not a number`);
        if (!Number.isFinite(n.value as number)) fail(`the number ${n.toString()} is out of range`);
        return;
      }
      case 'SymbolNode': {
        const s = n.name as string;
        if (!allowed.has(s) && !Object.hasOwn(CONSTANTS, s)) {
          if (Object.hasOwn(FUNCTION_ARITY, s) || NON_DIFFERENTIABLE.has(s)) fail(`the function '${s}' is used without arguments`);
          fail(`unknown symbol '${s}'`, `accepted: ${acceptedSymbols()}`);
        }
        return;
      }
      case 'ParenthesisNode':
        visit(n.content as MjNode);
        return;
      case 'OperatorNode': {
        const fn = n.fn as string;
        if (!Object.hasOwn(OPERATORS, fn)) {
          fail(`the operator '${n.op}' is not accepted`, 'accepted: + - * / ^');
        }
        for (const a of n.args ?? []) visit(a);
        return;
      }
      case 'FunctionNode': {
        const f = n.fn as { type?: string; name?: string };
        const name = f && f.type === 'SymbolNode' ? (f.name as string) : undefined;
        if (name === undefined) fail(`the call '${n.toString()}' is not accepted`);
        const nargs = (n.args ?? []).length;
        if (allowed.has(name as string)) fail(`'${name}' is a symbol, not a function (write '${name} * (...)' to multiply)`);
        if (NON_DIFFERENTIABLE.has(name as string)) {
          fail(`the function '${name}' is not accepted because it has no derivative everywhere`, functionList);
        }
        if (UNRELIABLE_DERIVATIVE.has(name as string)) {
          fail(`the function '${name}' is not accepted because its symbolic derivative is not reliable`, functionList);
        }
        const arity = Object.hasOwn(FUNCTION_ARITY, name as string) ? FUNCTION_ARITY[name as string] : undefined;
        if (arity === undefined) return fail(`unknown function '${name}'`, functionList);
        if (!arity.includes(nargs)) {
          fail(`the function '${name}' takes ${arity.join(' or ')} argument${arity.length === 1 && arity[0] === 1 ? '' : 's'}, found ${nargs}`);
        }
        for (const a of n.args ?? []) visit(a);
        return;
      }
      case 'BlockNode':
        fail('expected a single expression, found several');
        return;
      case 'AssignmentNode':
      case 'FunctionAssignmentNode':
        fail('assignments are not accepted (write the expression itself)');
        return;
      case 'ConditionalNode':
        fail('conditional expressions (a ? b : c) are not accepted because they have no derivative everywhere');
        return;
      default:
        fail(`'${n.toString()}' is not accepted (a ${n.type.replace(/Node$/, '').toLowerCase()} expression)`);
    }
  };
  visit(root);
  return root;
}

/** Deepest nesting of brackets ( [ { in the text (stops counting past the limit). */
function bracketDepth(text: string): number {
  let depth = 0;
  let deepest = 0;
  for (let i = 0; i < text.length && deepest <= EXPRESSION_LIMITS.nesting; i++) {
    const c = text.charCodeAt(i);
    if (c === 40 || c === 91 || c === 123) deepest = Math.max(deepest, ++depth);
    else if (c === 41 || c === 93 || c === 125) depth--;
  }
  return deepest;
}

/** Collapse the lines of a parser message into one. */
function oneLine(text: string): string {
  return text.replace(/\s*[\r\n]+\s*/g, ' ').trim();
}

const CHAIN_CLASS: Readonly<Record<string, number>> = { add: 1, subtract: 1, multiply: 2, divide: 2 };

/** The chain class of a binary + - (1) or * / (2) node; 0 for anything else. */
function chainClass(n: MjNode): number {
  return n.type === 'OperatorNode' && (n.args ?? []).length === 2 ? (CHAIN_CLASS[n.fn as string] ?? 0) : 0;
}

/** Children of a node of any kind (for function calls only the arguments, not the name). */
function childrenOf(n: MjNode): MjNode[] {
  if (n.type === 'OperatorNode' || n.type === 'FunctionNode') return [...(n.args ?? [])];
  if (n.type === 'ParenthesisNode') return [n.content as MjNode];
  const out: MjNode[] = [];
  (n as unknown as { forEach(f: (c: MjNode) => void): void }).forEach((c) => out.push(c));
  return out;
}

/**
 * Node count (brackets not counted) and nesting of a parse tree, without recursion (a sum of
 * thousands of terms is a chain thousands deep). Nesting: one level per function call, power,
 * sign and bracketed sub-expression; a chain of + and - (or of * and /) is one level.
 */
function measure(root: MjNode): { nodes: number; nesting: number } {
  const level = new Map<MjNode, number>();
  let nodes = 0;
  const stack: { n: MjNode; kids: MjNode[]; i: number }[] = [{ n: root, kids: childrenOf(root), i: 0 }];
  while (stack.length > 0) {
    const top = stack[stack.length - 1];
    if (top.i < top.kids.length) {
      const k = top.kids[top.i++];
      stack.push({ n: k, kids: childrenOf(k), i: 0 });
      continue;
    }
    stack.pop();
    const n = top.n;
    let l = 0;
    if (n.type === 'ParenthesisNode') l = level.get(top.kids[0]) ?? 0;
    else {
      nodes++;
      const cls = chainClass(n);
      for (const k of top.kids) l = Math.max(l, cls !== 0 && chainClass(k) === cls ? (level.get(k) ?? 0) : 1 + (level.get(k) ?? 0));
    }
    level.set(n, l);
  }
  return { nodes, nesting: level.get(root) ?? 0 };
}

/**
 * Regroup every chain of more than LONG_CHAIN terms of + and - (or of * and /) pairwise:
 * a - b + c - d ... becomes (a - b) + (c - d) ..., with the operators adjusted so the value is
 * the same. Chains are walked with a loop (they can be thousands deep); the recursion only goes
 * down the nesting levels, which measure() has bounded.
 */
function balanceChains(n: MjNode): MjNode {
  const M = math();
  const cls = chainClass(n);
  if (cls === 0) {
    if (n.type === 'OperatorNode') return new M.OperatorNode(n.op as never, n.fn as never, (n.args ?? []).map((a) => balanceChains(a) as never)) as unknown as MjNode;
    if (n.type === 'FunctionNode') return new M.FunctionNode(n.fn as never, (n.args ?? []).map((a) => balanceChains(a) as never)) as unknown as MjNode;
    if (n.type === 'ParenthesisNode') return new M.ParenthesisNode(balanceChains(n.content as MjNode) as never) as unknown as MjNode;
    return n;
  }
  // the chain's terms, first to last, each with its sign (+1: + or *, -1: - or /)
  const terms: { sign: number; x: MjNode }[] = [];
  let at: MjNode = n;
  while (chainClass(at) === cls) {
    const [a, b] = at.args as readonly MjNode[];
    terms.push({ sign: at.fn === 'subtract' || at.fn === 'divide' ? -1 : 1, x: b });
    at = a;
  }
  terms.push({ sign: 1, x: at });
  terms.reverse();
  const items = terms.map((t) => ({ sign: t.sign, x: balanceChains(t.x) }));
  const [plus, minus] = cls === 1 ? [['+', 'add'], ['-', 'subtract']] : [['*', 'multiply'], ['/', 'divide']];
  const join = (a: MjNode, sign: number, b: MjNode): MjNode => {
    const [op, fn] = sign > 0 ? plus : minus;
    return new M.OperatorNode(op as never, fn as never, [a as never, b as never]) as unknown as MjNode;
  };
  if (items.length <= LONG_CHAIN) return items.slice(1).reduce((acc, t) => join(acc, t.sign, t.x), items[0].x);
  // terms lo..hi, relative to the sign of term lo
  const build = (lo: number, hi: number): MjNode => {
    if (lo === hi) return items[lo].x;
    const mid = lo + ((hi - lo + 1) >> 1);
    return join(build(lo, mid - 1), items[mid].sign * items[lo].sign, build(mid, hi));
  };
  return build(0, items.length - 1);
}

/** Symbol names used in a checked tree (constants excluded). */
export function symbolsUsed(root: MjNode): Set<string> {
  const out = new Set<string>();
  const visit = (n: MjNode): void => {
    if (n.type === 'SymbolNode' && !Object.hasOwn(CONSTANTS, n.name as string)) out.add(n.name as string);
    if (n.type === 'ParenthesisNode') visit(n.content as MjNode);
    for (const a of n.args ?? []) visit(a);
  };
  visit(root);
  return out;
}

// ---------------------------------------------------------------------------------------------
// Internal expression tree

export type Expr =
  | { readonly k: 'num'; readonly v: number }
  | { readonly k: 'sym'; readonly slot: number }
  | { readonly k: 'add' | 'sub' | 'mul' | 'div' | 'pow'; readonly a: Expr; readonly b: Expr }
  | { readonly k: 'neg'; readonly a: Expr }
  | { readonly k: 'fn'; readonly name: string; readonly args: readonly Expr[] };

const num = (v: number): Expr => ({ k: 'num', v });
const ZERO = num(0);
const ONE = num(1);

const isNum = (e: Expr, v?: number): e is { k: 'num'; v: number } => e.k === 'num' && (v === undefined || e.v === v);

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

/** Convert a checked mathjs tree (or a mathjs derivative of one) to the internal tree. */
function toExpr(n: MjNode, slots: ReadonlyMap<string, number>): Expr {
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

// ---------------------------------------------------------------------------------------------
// Code generation

/** Integer powers up to this magnitude become products; larger ones call Math.pow. */
const MAX_PRODUCT_POWER = 8;

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

// ---------------------------------------------------------------------------------------------
// Differentiation

/**
 * d root / d variable as a tidied internal tree. `outer`: for a second derivative, the variable
 * `root` is already a derivative with respect to (messages only).
 */
function differentiate(root: MjNode, variable: string, label: string, text: string, slots: ReadonlyMap<string, number>, outer?: string): Expr {
  const tooLarge = (): never => {
    const what = outer === undefined ? `the derivative of ${quote(text)} with respect to '${variable}'` : `the second derivative of ${quote(text)} with respect to '${outer}' and '${variable}'`;
    throw new ExpressionError(`${label}: ${what} is too large (limit: ${EXPRESSION_LIMITS.nodes.toLocaleString('en')} nodes per derivative)`);
  };
  // bounded before mathjs builds it (a derivative can grow with the square of the size) ...
  if (derivativeBound(root, variable) > 10 * EXPRESSION_LIMITS.nodes) tooLarge();
  let d: MjNode;
  try {
    d = derivative(root as never, variable, { simplify: false }) as unknown as MjNode;
  } catch (err) {
    const msg = err instanceof Error ? err.message : String(err);
    throw new ExpressionError(`${label}: cannot differentiate ${quote(text)} with respect to '${variable}': ${msg}`);
  }
  // ... and checked once tidied
  const e = tidy(toExpr(d, slots));
  if (exprSize(e) > EXPRESSION_LIMITS.nodes) tooLarge();
  return e;
}

/**
 * An upper bound on the node count of mathjs's derivative of `n` (simplify off): a sub-tree free
 * of the variable differentiates to one node; otherwise every rule (product, quotient, general
 * power, chain rule of each accepted function) copies the node's operands at most three times
 * and adds at most a dozen nodes besides the operands' own derivatives.
 */
function derivativeBound(n: MjNode, variable: string): number {
  const visit = (x: MjNode): { size: number; uses: boolean; bound: number } => {
    if (x.type === 'SymbolNode') return { size: 1, uses: x.name === variable, bound: 1 };
    const kids = childrenOf(x).map(visit);
    const size = 1 + kids.reduce((a, k) => a + k.size, 0);
    const uses = kids.some((k) => k.uses);
    if (!uses) return { size, uses, bound: 1 };
    const bounds = kids.reduce((a, k) => a + k.bound, 0);
    const fn = x.type === 'OperatorNode' ? (x.fn as string) : x.type;
    switch (fn) {
      case 'ParenthesisNode': // (a)' = (a')
      case 'add': // (a ± b)' = a' ± b'
      case 'subtract':
      case 'unaryMinus':
      case 'unaryPlus':
        return { size, uses, bound: 1 + bounds };
      case 'multiply': // a'·b + a·b', or c·a' with c constant
        return { size, uses, bound: 3 + size + bounds };
      default: // quotient, powers and the chain rule of every function: the operands at most three times
        return { size, uses, bound: 12 + 3 * size + bounds };
    }
  };
  return visit(n).bound;
}

/** Nodes of an internal tree. */
function exprSize(e: Expr): number {
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

// ---------------------------------------------------------------------------------------------
// Compiled systems

export interface ReactionSystemSpec {
  /** Field names, in unknown order. */
  readonly fields: readonly string[];
  /** Parameter names. */
  readonly parameters: readonly string[];
  /** Reaction term per field (every field needs one; "0" for none). */
  readonly reaction: Readonly<Record<string, unknown>>;
  /** Coordinates the expressions may use (default x, y, z); others are unknown symbols. */
  readonly coordinates?: readonly ('x' | 'y' | 'z')[];
  /** How to name an expression in errors; default `reaction for field '<name>'`. */
  readonly label?: (field: string) => string;
}

/**
 * A compiled multi-field reaction term R(u, p, x) evaluated at one grid node.
 *
 * Input slots (`a`): the field values in field order, then the parameter values in parameter
 * order, then the coordinates x, y, z (`coordinateSlot`) — `slots` entries; the second-order
 * functions also read two direction vectors s and t from `directionSlot` on (s_b at
 * directionSlot + b, t_c at directionSlot + nf + c). Outputs go to `o` from index 0; nothing is
 * allocated per call.
 */
export interface CompiledReaction {
  readonly fields: readonly string[];
  readonly parameters: readonly string[];
  /** Length of the input array a for the first-order functions: fields + parameters + 3. */
  readonly slots: number;
  /** Index of the first parameter slot (= number of fields). */
  readonly parameterSlot: number;
  /** Index of the x slot (y and z follow). */
  readonly coordinateSlot: number;
  /** Index of the first direction slot (= slots); the second-order functions need slots + 2·nf inputs. */
  readonly directionSlot: number;
  /** Whether any reaction term depends on x, y or z. */
  readonly usesCoordinates: boolean;
  /**
   * Structurally non-zero entries ∂R_row/∂u_col, sorted by row then column. A derivative whose
   * symbolic form tidies to 0 is left out; everything else is kept (also entries that happen to
   * vanish at some states).
   */
  readonly couplingRows: Int32Array;
  readonly couplingCols: Int32Array;
  /** Per parameter: the fields whose reaction term depends on it. */
  readonly parameterFields: readonly Int32Array[];
  /** o[i] = R_i for every field i. */
  readonly residual: SlotFunction;
  /** o[c] = ∂R_row(c)/∂u_col(c) for every coupling c. */
  readonly jacobian: SlotFunction;
  /** Per parameter k: o[i] = ∂R_i/∂p_k for every field i (zeros written too). */
  readonly parameterDerivative: readonly SlotFunction[];
  /** o[i] = Σ_bc ∂²R_i/∂u_b∂u_c s_b t_c for every field i. */
  readonly secondDerivative: SlotFunction;
  /** Per parameter k: o[i] = Σ_b ∂²R_i/∂u_b∂p_k s_b for every field i. */
  readonly mixedDerivative: readonly SlotFunction[];
  /** Internal trees in slot numbering, for code generation with other calling conventions. */
  readonly trees: {
    readonly residual: readonly Expr[];
    /** Aligned with couplingRows/couplingCols. */
    readonly jacobian: readonly Expr[];
    /** [parameter][field]. */
    readonly parameter: readonly (readonly Expr[])[];
    /** [field]: the contracted second derivative (reads direction slots). */
    readonly second: readonly Expr[];
    /** [parameter][field]: the contracted mixed derivative (reads the s direction slots). */
    readonly mixed: readonly (readonly Expr[])[];
    /** [field]: Σ |summand| of the reaction term (see `summands`). */
    readonly magnitude: readonly Expr[];
  };
  /** Generated JavaScript, for inspection. */
  readonly sources: { readonly residual: string; readonly jacobian: string; readonly parameter: readonly string[] };
}

function checkDistinctNames(fields: readonly string[], parameters: readonly string[]): void {
  const seen = new Map<string, string>();
  for (const [role, list] of [['field', fields], ['parameter', parameters]] as const) {
    for (const n of list) {
      checkName(n, role);
      const before = seen.get(n);
      if (before !== undefined) {
        throw new ExpressionError(before === role ? `${role} '${n}' is named twice` : `'${n}' is both a ${before} and a ${role} name`);
      }
      seen.set(n, role);
    }
  }
}

/** Slot map: fields, then parameters, then x, y, z. */
function slotMap(fields: readonly string[], parameters: readonly string[]): Map<string, number> {
  const m = new Map<string, number>();
  fields.forEach((f, i) => m.set(f, i));
  parameters.forEach((p, k) => m.set(p, fields.length + k));
  COORDINATES.forEach((c, d) => m.set(c, fields.length + parameters.length + d));
  return m;
}

/** Print an internal tree as mathjs text (fully parenthesised), symbols named by `names[slot]` (mathTree builds the tree this parses to). */
export function printMath(e: Expr, names: readonly string[]): string {
  switch (e.k) {
    case 'num':
      return e.v < 0 || Object.is(e.v, -0) ? `(-${String(-e.v)})` : String(e.v);
    case 'sym':
      return names[e.slot];
    case 'neg':
      return `(-${printMath(e.a, names)})`;
    case 'fn':
      return `${e.name}(${e.args.map((x) => printMath(x, names)).join(', ')})`;
    default: {
      const op = { add: '+', sub: '-', mul: '*', div: '/', pow: '^' }[e.k];
      return `(${printMath(e.a, names)} ${op} ${printMath(e.b, names)})`;
    }
  }
}

/**
 * The mathjs tree that parsing printMath(e, names) gives, built directly: the same nodes
 * (every operation and every negative number in brackets), so the derivatives taken from it are
 * the same, without printing and parsing again (the parser recurses per bracket, and a long sum
 * printed fully bracketed would run out of stack).
 */
export function mathTree(e: Expr, names: readonly string[]): MjNode {
  const M = math();
  const node = (x: unknown): MjNode => x as MjNode;
  const negative = (a: MjNode): MjNode => node(new M.ParenthesisNode(new M.OperatorNode('-', 'unaryMinus', [a as never]) as never));
  const build = (x: Expr): MjNode => {
    switch (x.k) {
      case 'num':
        return x.v < 0 || Object.is(x.v, -0) ? negative(node(new M.ConstantNode(-x.v))) : node(new M.ConstantNode(x.v));
      case 'sym':
        return node(new M.SymbolNode(names[x.slot]));
      case 'neg':
        return negative(build(x.a));
      case 'fn':
        return node(new M.FunctionNode(new M.SymbolNode(x.name), x.args.map((a) => build(a) as never)));
      default: {
        const [op, fn] = { add: ['+', 'add'], sub: ['-', 'subtract'], mul: ['*', 'multiply'], div: ['/', 'divide'], pow: ['^', 'pow'] }[x.k];
        return node(new M.ParenthesisNode(new M.OperatorNode(op as never, fn as never, [build(x.a) as never, build(x.b) as never]) as never));
      }
    }
  };
  return build(e);
}

/** Slots an internal tree reads. */
function slotsUsed(e: Expr, out = new Set<number>()): Set<number> {
  switch (e.k) {
    case 'num': break;
    case 'sym': out.add(e.slot); break;
    case 'neg': slotsUsed(e.a, out); break;
    case 'fn': e.args.forEach((x) => slotsUsed(x, out)); break;
    default: slotsUsed(e.a, out); slotsUsed(e.b, out);
  }
  return out;
}

/** A non-finite constant (e.g. from 1/0 in the text) is a user error, not a value to compute with. */
function checkFiniteConstants(e: Expr, label: string, text: string): void {
  const visit = (x: Expr): void => {
    if (x.k === 'num') {
      if (!Number.isFinite(x.v)) throw new ExpressionError(`${label}: a constant part evaluates to ${x.v} (division by zero or overflow?) in ${quote(text)}`);
      return;
    }
    if (x.k === 'sym') return;
    if (x.k === 'neg') return visit(x.a);
    if (x.k === 'fn') return x.args.forEach(visit);
    visit(x.a);
    visit(x.b);
  };
  visit(e);
}

/** Products of sums are multiplied out up to this many summands; beyond, a product stays one term. */
const MAX_SUMMANDS = 32;

/**
 * The summands of an expression: split at + and − (unary minus dropped), products and quotients
 * of sums multiplied out (while at most MAX_SUMMANDS result). `λ*(u - u^3)` gives λ·u and λ·u³;
 * `exp(u)/(1 + u)` stays one summand.
 */
export function summands(e: Expr): Expr[] {
  switch (e.k) {
    case 'add':
    case 'sub':
      return [...summands(e.a), ...summands(e.b)];
    case 'neg':
      return summands(e.a);
    case 'mul': {
      const a = summands(e.a);
      const b = summands(e.b);
      if (a.length * b.length > MAX_SUMMANDS) return [e];
      return a.flatMap((x) => b.map((y) => product(x, y)));
    }
    case 'div':
      return summands(e.a).map((x): Expr => ({ k: 'div', a: x, b: e.b }));
    default:
      return [e];
  }
}

/** Σ |summand| of an expression (Problem.residualMagnitudes for expression models). */
export function magnitudeOf(e: Expr): Expr {
  const parts = summands(e).map((x): Expr => (x.k === 'num' ? num(Math.abs(x.v)) : { k: 'fn', name: 'abs', args: [x] }));
  return tidy(sumOf(parts));
}

const sumOf = (terms: Expr[]): Expr => (terms.length === 0 ? ZERO : terms.reduce((x, y) => ({ k: 'add', a: x, b: y })));
const product = (a: Expr, b: Expr): Expr => ({ k: 'mul', a, b });

/** Parse, check, differentiate (to second order) and compile a reaction system. */
export function compileReaction(spec: ReactionSystemSpec): CompiledReaction {
  const { fields, parameters } = spec;
  if (!Array.isArray(fields) || fields.length === 0) throw new ExpressionError('fields: at least one field name is needed');
  checkDistinctNames(fields, parameters);
  const label = spec.label ?? ((f: string) => `reaction for field '${f}'`);
  const reaction = spec.reaction ?? {};
  for (const key of Object.keys(reaction)) {
    if (!fields.includes(key)) {
      throw new ExpressionError(`reaction given for unknown field '${key}' (fields: ${fields.join(', ')})`);
    }
  }
  const slots = slotMap(fields, parameters);
  const names = [...fields, ...parameters, ...COORDINATES];
  const allowed = [...fields, ...parameters, ...(spec.coordinates ?? COORDINATES)];
  const nf = fields.length;
  const np = parameters.length;
  const directionSlot = nf + np + 3;
  const sSlot = (b: number): Expr => ({ k: 'sym', slot: directionSlot + b });
  const tSlot = (c: number): Expr => ({ k: 'sym', slot: directionSlot + nf + c });

  const residual: Expr[] = [];
  const couplings: { row: number; col: number; e: Expr }[] = [];
  const paramTrees: Expr[][] = parameters.map(() => new Array<Expr>(nf).fill(ZERO));
  const paramFields: number[][] = parameters.map(() => []);
  const second: Expr[] = [];
  const mixedTerms: Expr[][][] = parameters.map(() => fields.map(() => []));
  let usesCoordinates = false;

  fields.forEach((f, i) => withinStack(label(f), () => {
    if (!Object.hasOwn(reaction, f) || reaction[f] === undefined) {
      throw new ExpressionError(`${label(f)}: missing (give an expression for every field; write 0 for none)`);
    }
    const raw = reaction[f];
    const text = typeof raw === 'number' ? String(raw) : (raw as string);
    const root = parseChecked(raw, label(f), allowed);
    const used = symbolsUsed(root);
    if (COORDINATES.some((c) => used.has(c))) usesCoordinates = true;
    const value = tidy(toExpr(root, slots));
    checkFiniteConstants(value, label(f), text);
    residual.push(value);
    const secondTerms: Expr[] = [];
    fields.forEach((g, j) => {
      if (!used.has(g)) return;
      const d = differentiate(root, g, label(f), text, slots);
      if (isNum(d, 0)) return;
      couplings.push({ row: i, col: j, e: d });
      // second order: differentiate the tidied first derivative again
      const dUses = slotsUsed(d);
      if (![...dUses].some((s) => s < nf + np)) return;
      const dRoot = mathTree(d, names);
      fields.forEach((h, c) => {
        if (!dUses.has(c)) return;
        const dd = differentiate(dRoot, h, label(f), text, slots, g);
        if (!isNum(dd, 0)) secondTerms.push(product(dd, product(sSlot(j), tSlot(c))));
      });
      parameters.forEach((p, k) => {
        if (!dUses.has(nf + k)) return;
        const dd = differentiate(dRoot, p, label(f), text, slots, g);
        if (!isNum(dd, 0)) mixedTerms[k][i].push(product(dd, sSlot(j)));
      });
    });
    second.push(sumOf(secondTerms));
    parameters.forEach((p, k) => {
      if (!used.has(p)) return;
      const d = differentiate(root, p, label(f), text, slots);
      if (!isNum(d, 0)) {
        paramTrees[k][i] = d;
        paramFields[k].push(i);
      }
    });
  }));

  const jacTrees = couplings.map((c) => c.e);
  const mixed = mixedTerms.map((perField) => perField.map(sumOf));
  const res = generate(residual);
  const jac = generate(jacTrees);
  const par = paramTrees.map((t) => generate(t));
  return {
    fields: [...fields],
    parameters: [...parameters],
    slots: nf + np + 3,
    parameterSlot: nf,
    coordinateSlot: nf + np,
    directionSlot,
    usesCoordinates,
    couplingRows: Int32Array.from(couplings.map((c) => c.row)),
    couplingCols: Int32Array.from(couplings.map((c) => c.col)),
    parameterFields: paramFields.map((l) => Int32Array.from(l)),
    residual: res.fn,
    jacobian: jac.fn,
    parameterDerivative: par.map((x) => x.fn),
    secondDerivative: generate(second).fn,
    mixedDerivative: mixed.map((t) => generate(t).fn),
    trees: { residual, jacobian: jacTrees, parameter: paramTrees, second, mixed, magnitude: residual.map(magnitudeOf) },
    sources: { residual: res.source, jacobian: jac.source, parameter: par.map((x) => x.source) },
  };
}

/**
 * A compiled scalar expression in a given list of symbols (no fields): value and gradient.
 * Used for diffusion coefficients (in the parameters) and initial states (in the parameters
 * and x, y, z).
 */
export interface CompiledScalar {
  readonly text: string;
  /** Symbols in slot order. */
  readonly symbols: readonly string[];
  /** Symbols the expression actually uses. */
  readonly uses: ReadonlySet<string>;
  /** Whether the expression is a constant (uses no symbol). */
  readonly constant: boolean;
  /** Value at a[0..symbols.length). */
  value(a: ArrayLike<number>): number;
  /** ∂/∂symbols[k] at a; exactly 0 when the expression does not depend on it. */
  gradient(a: ArrayLike<number>, k: number): number;
}

/** Parse, check, differentiate and compile one scalar expression. */
export function compileScalar(raw: unknown, label: string, symbols: readonly string[]): CompiledScalar {
  return withinStack(label, () => compileScalarChecked(raw, label, symbols));
}

/**
 * Run `f`, turning a stack overflow into a one-line refusal: the limits keep expressions far
 * from it, this is the safety net should a recursion (ours or mathjs's) still run deep.
 */
function withinStack<T>(label: string, f: () => T): T {
  try {
    return f();
  } catch (err) {
    if (err instanceof RangeError && /call stack/i.test(err.message)) {
      throw new ExpressionError(`${label}: the expression is too deeply nested to compile (limits: ${expressionLimitsText})`);
    }
    throw err;
  }
}

function compileScalarChecked(raw: unknown, label: string, symbols: readonly string[]): CompiledScalar {
  const root = parseChecked(raw, label, symbols);
  const text = typeof raw === 'number' ? String(raw) : (raw as string);
  const slots = new Map<string, number>(symbols.map((s, i) => [s, i]));
  const uses = symbolsUsed(root);
  const tree = tidy(toExpr(root, slots));
  checkFiniteConstants(tree, label, text);
  const valueFn = generate([tree]).fn;
  const grads = symbols.map((s) => (uses.has(s) ? generate([differentiate(root, s, label, text, slots)]).fn : undefined));
  const a = new Float64Array(Math.max(1, symbols.length));
  const o = new Float64Array(1);
  const load = (x: ArrayLike<number>): void => {
    for (let i = 0; i < symbols.length; i++) a[i] = x[i];
  };
  return {
    text,
    symbols: [...symbols],
    uses,
    constant: uses.size === 0,
    value(x) {
      load(x);
      valueFn(a, o);
      return o[0];
    },
    gradient(x, k) {
      const g = grads[k];
      if (g === undefined) return 0;
      load(x);
      g(a, o);
      return o[0];
    },
  };
}
