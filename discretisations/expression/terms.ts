/**
 * Compiled expressions as `ReactionTerms` of the shared reaction–diffusion assembly
 * (../reaction-diffusion.ts): the same trees as compile.ts, generated again for the assembly's
 * calling convention so that no copying happens per node:
 *
 *   value(u, x, q, out)                     out[a]        = R_a
 *   jacobian(u, x, q, out)                  out[a·nf + b] = ∂R_a/∂u_b   (dense nf×nf; zeros written)
 *   parameterDerivative(u, x, q, j, out)    out[a]        = ∂R_a/∂q_j
 *   secondDerivative(u, x, q, s, t, out)    out[a]        = Σ_bc ∂²R_a/∂u_b∂u_c s_b t_c
 *   mixedDerivative(u, x, q, j, s, out)     out[a]        = Σ_b ∂²R_a/∂u_b∂q_j s_b
 *   magnitude(u, x, q, out)                 out[a]        = Σ |summands of R_a| (compile.ts `summands`)
 *
 * u holds the field values at the node, x the node position (dim entries), q the parameter
 * values in the compiled parameter order. `coupling` marks the structurally non-zero ∂R_a/∂u_b,
 * so the Jacobian pattern holds only couplings that exist (the assembly always keeps the
 * diagonal, which is then written as 0 where absent).
 */
import type { ReactionTerms } from '../reaction-diffusion.js';
import { type CompiledReaction, type Expr, ExpressionError, generateStatements } from './compile.js';

export interface ExpressionReactionTerms extends ReactionTerms {
  readonly coupling: readonly boolean[];
  readonly usesPosition: boolean;
  /** Generated JavaScript of each callback, for inspection and error reports. */
  readonly sources: Readonly<Record<'value' | 'jacobian' | 'parameterDerivative' | 'secondDerivative' | 'mixedDerivative' | 'magnitude', string>>;
}

/** Build the assembly callbacks for a compiled system on a grid of dimension `dim`. */
export function reactionTerms(c: CompiledReaction, dim: number): ExpressionReactionTerms {
  const nf = c.fields.length;
  const np = c.parameters.length;
  const access = (slot: number): string => {
    if (slot < nf) return `u[${slot}]`;
    if (slot < c.coordinateSlot) return `q[${slot - nf}]`;
    if (slot < c.directionSlot) {
      const d = slot - c.coordinateSlot;
      if (d >= dim) {
        throw new ExpressionError(`a reaction term uses the coordinate '${'xyz'[d]}', but the grid has ${dim} ax${dim === 1 ? 'is' : 'es'}`);
      }
      return `x[${d}]`;
    }
    const k = slot - c.directionSlot;
    return k < nf ? `s[${k}]` : `t[${k - nf}]`;
  };
  const body = (exprs: readonly Expr[], target: (i: number) => string): string[] => generateStatements(exprs, target, access);
  const compile = (args: string[], lines: string[]): { fn: (...a: never[]) => void; source: string } => {
    const source = ['"use strict";', ...lines].join('\n');
    // eslint-disable-next-line @typescript-eslint/no-implied-eval
    return { fn: new Function(...args, source) as (...a: never[]) => void, source };
  };
  /** One function with a switch on the parameter index j; each case has its own temporaries. */
  const switchOnParameter = (perParameter: readonly (readonly Expr[])[]): string[] => {
    const lines = ['switch (j) {'];
    perParameter.forEach((exprs, j) => {
      lines.push(`case ${j}: {`, ...body(exprs, (a) => `o[${a}]`), 'return;', '}');
    });
    lines.push('}');
    lines.push(`throw new RangeError('parameter index ' + j + ' outside 0..${np - 1}');`);
    return lines;
  };

  const coupling = new Array<boolean>(nf * nf).fill(false);
  for (let k = 0; k < c.couplingRows.length; k++) coupling[c.couplingRows[k] * nf + c.couplingCols[k]] = true;
  const jacLines = body(c.trees.jacobian, (k) => `o[${c.couplingRows[k] * nf + c.couplingCols[k]}]`);
  for (let e = 0; e < nf * nf; e++) if (!coupling[e]) jacLines.push(`o[${e}] = 0;`);

  const value = compile(['u', 'x', 'q', 'o'], body(c.trees.residual, (a) => `o[${a}]`));
  const jacobian = compile(['u', 'x', 'q', 'o'], jacLines);
  const parameterDerivative = compile(['u', 'x', 'q', 'j', 'o'], switchOnParameter(c.trees.parameter));
  const secondDerivative = compile(['u', 'x', 'q', 's', 't', 'o'], body(c.trees.second, (a) => `o[${a}]`));
  const mixedDerivative = compile(['u', 'x', 'q', 'j', 's', 'o'], switchOnParameter(c.trees.mixed));
  const magnitude = compile(['u', 'x', 'q', 'o'], body(c.trees.magnitude, (a) => `o[${a}]`));

  return {
    coupling,
    usesPosition: c.usesCoordinates,
    value: value.fn as ReactionTerms['value'],
    jacobian: jacobian.fn as ReactionTerms['jacobian'],
    parameterDerivative: parameterDerivative.fn as ReactionTerms['parameterDerivative'],
    secondDerivative: secondDerivative.fn as NonNullable<ReactionTerms['secondDerivative']>,
    mixedDerivative: mixedDerivative.fn as NonNullable<ReactionTerms['mixedDerivative']>,
    magnitude: magnitude.fn as NonNullable<ReactionTerms['magnitude']>,
    sources: {
      value: value.source,
      jacobian: jacobian.source,
      parameterDerivative: parameterDerivative.source,
      secondDerivative: secondDerivative.source,
      mixedDerivative: mixedDerivative.source,
      magnitude: magnitude.source,
    },
  };
}
