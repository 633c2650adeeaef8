/**
 * What user-written expressions may contain (./compile.ts): the size limits, the accepted
 * functions with their argument counts, the constants and coordinates, the words the parser
 * reserves, the functions refused (no derivative everywhere, or one mathjs gets wrong), the
 * one-line ExpressionError and the check of a user-chosen field or parameter name.
 */

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
export const LONG_CHAIN = 32;

/** Smooth functions accepted in expressions, with their argument counts. */
export const FUNCTION_ARITY: Readonly<Record<string, readonly number[]>> = {
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
export const NON_DIFFERENTIABLE = new Set([
  'abs', 'sign', 'min', 'max', 'floor', 'ceil', 'round', 'fix', 'mod', 'heaviside', 'atan2',
  'cbrt', 'nthRoot', 'hypot', 'asec', 'acsc', 'acsch', 'asech', 'log2', 'log1p', 'expm1', 'erf',
  'gamma', 'factorial', 'random',
]);

/** Functions refused because mathjs 15.2 differentiates them wrongly (acoth: wrong sign). */
export const UNRELIABLE_DERIVATIVE = new Set(['acoth']);

/** Named constants accepted in expressions. */
export const CONSTANTS: Readonly<Record<string, number>> = { pi: Math.PI, e: Math.E };
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
export function quote(text: string): string {
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
