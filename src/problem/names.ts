/**
 * Output column names that parameters, monitors and extra unknowns may not take: the run layer
 * writes these columns itself for every point.
 */
import type { Problem } from './problem.js';

export const reservedColumnNames: readonly string[] = Object.freeze([
  'point',
  'arclength',
  'step-length',
  'max',
  'min',
  'l2-norm',
  'newton-iterations',
  'stable',
  'unstable-count',
  'leading-real',
  'leading-imag',
  'branch',
]);

/** Whether `name` is reserved (exact, case-sensitive match). */
export function isReservedColumnName(name: string): boolean {
  return reservedColumnNames.includes(name);
}

/**
 * Check a problem's names: parameters may not use a reserved column name; parameter, monitor
 * and extra-unknown names must be distinct from each other (they become columns of the same
 * table). Monitors named `max`, `min`, `l2-norm` are the problem's own (they are the point's
 * columns). Throws an Error naming the first clash.
 */
export function validateProblemNames(problem: Problem): void {
  const seen = new Map<string, string>();
  const claim = (name: string, what: string): void => {
    const prev = seen.get(name);
    if (prev !== undefined) {
      throw new Error(`model '${problem.model}': name '${name}' is used by both ${prev} and ${what}`);
    }
    seen.set(name, what);
  };
  for (const s of problem.parameters) {
    if (isReservedColumnName(s.name)) {
      throw new Error(
        `model '${problem.model}': parameter name '${s.name}' is reserved for an output column (reserved: ${reservedColumnNames.join(', ')})`,
      );
    }
    if (!/^[A-Za-z_][A-Za-z0-9_]*$/.test(s.name)) {
      throw new Error(`model '${problem.model}': parameter name '${s.name}' must be a letter or underscore followed by letters, digits or underscores`);
    }
    claim(s.name, 'a parameter');
  }
  for (const m of problem.monitors) claim(m.name, 'a monitor');
  for (const e of problem.extraUnknowns) {
    if (!seen.has(e.name)) claim(e.name, 'an extra unknown');
  }
}
