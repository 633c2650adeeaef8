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
 *
 * The steps live beside this file: ./vocabulary.ts (limits, accepted functions and names),
 * ./parse.ts (step 1), ./derivatives.ts (step 2), ./tree.ts (step 3) and ./generate.ts (step 4);
 * this file puts them together into compiled reaction systems and scalar expressions.
 */
import { COORDINATES, ExpressionError, checkName, expressionLimitsText, quote } from './vocabulary.js';
import { type MjNode, math, parseChecked, symbolsUsed } from './parse.js';
import { differentiate } from './derivatives.js';
import { type Expr, ZERO, isNum, num, tidy, toExpr } from './tree.js';
import { type SlotFunction, generate } from './generate.js';

// the steps' own exports, offered here as before
export { ACCEPTED_CONSTANTS, ACCEPTED_FUNCTIONS, COORDINATES, EXPRESSION_LIMITS, ExpressionError, checkName, expressionLimitsText } from './vocabulary.js';
export { parseChecked, symbolsUsed } from './parse.js';
export { type Expr, evaluateExpr, tidy } from './tree.js';
export { type SlotFunction, generate, generateStatements } from './generate.js';

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
