/**
 * Step 1 of the expression compiler (./compile.ts): parse with mathjs and check the tree strictly
 * against the vocabulary (./vocabulary.ts) and the size limits, on the text and on the tree,
 * before anything is differentiated; long sums and products are regrouped pairwise so that their
 * derivatives stay shallow. mathjs itself is loaded here, on first use.
 */
import { createRequire } from 'node:module';
import type * as MathJs from 'mathjs';
import { ACCEPTED_FUNCTIONS, CONSTANTS, EXPRESSION_LIMITS, ExpressionError, FUNCTION_ARITY, LONG_CHAIN, NON_DIFFERENTIABLE, UNRELIABLE_DERIVATIVE, quote } from './vocabulary.js';

/**
 * mathjs is loaded on first use (it takes most of a second to load, and only expression-defined
 * models need it), synchronously through its CommonJS build.
 */
let mathjs: typeof MathJs | undefined;
export function math(): typeof MathJs {
  mathjs ??= createRequire(import.meta.url)('mathjs') as typeof MathJs;
  return mathjs;
}
const parse = (text: string) => math().parse(text);
export const derivative = (...args: Parameters<typeof MathJs.derivative>) => math().derivative(...args);

/** The minimal view of mathjs nodes this module relies on. */
export interface MjNode {
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
export function childrenOf(n: MjNode): MjNode[] {
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
