/**
 * Step 2 of the expression compiler (./compile.ts): symbolic derivatives with mathjs (simplify
 * off), their size bounded before mathjs builds them and checked once tidied into our own tree.
 */
import { EXPRESSION_LIMITS, ExpressionError, quote } from './vocabulary.js';
import { type MjNode, childrenOf, derivative } from './parse.js';
import { type Expr, exprSize, tidy, toExpr } from './tree.js';

/**
 * d root / d variable as a tidied internal tree. `outer`: for a second derivative, the variable
 * `root` is already a derivative with respect to (messages only).
 */
export function differentiate(root: MjNode, variable: string, label: string, text: string, slots: ReadonlyMap<string, number>, outer?: string): Expr {
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
