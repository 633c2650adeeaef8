/**
 * The true residual of a curve point's state: ‖F(u, p)‖_w and what it is tested against, the
 * one-parameter corrector's bound rtol·‖terms‖_w + 16·ε·‖rounding‖_w (src/problem/residual-size.ts,
 * no row scaling: a fourth-order stencil cannot make a wrong state look converged). The curve
 * systems record F at every evaluation here; the bound is computed only when the corrector asks.
 */
import { ResidualSizes } from '../../problem/residual-size.js';
import { type Params, type Problem, weightedNorm } from '../../problem/problem.js';

export class StateResidual {
  private readonly sizes: ResidualSizes;
  private u: Float64Array | undefined;
  private p: Params | undefined;
  private f: Float64Array | undefined;
  private sized = false;
  /** ‖F‖_w at the last recorded state. */
  norm = NaN;

  constructor(readonly problem: Problem) {
    this.sizes = new ResidualSizes(problem);
  }

  /**
   * Record the state u at p and f = F(u, p) (kept by reference: the caller leaves them unchanged
   * until the next `record`); returns ‖F‖_w.
   */
  record(u: Float64Array, p: Params, f: Float64Array): number {
    this.u = u;
    this.p = p;
    this.f = f;
    this.sized = false;
    this.norm = weightedNorm(this.problem.weights, f);
    return this.norm;
  }

  /** rtol·‖terms‖_w + 16·ε·‖rounding‖_w at the recorded state. */
  bound(rtol: number): number {
    if (!this.u || !this.p || !this.f) throw new Error('no state recorded');
    if (!this.sized) {
      this.sizes.evaluate(this.u, this.p, this.f);
      this.sized = true;
    }
    return this.sizes.bound(rtol);
  }
}
