/**
 * The model a case names, besides the built-in registry: code models (a module of the user's
 * whose default export builds the problem) — which of them a case may load, where it lies, and
 * loading it with one-line errors —, the case field a model's error message is about, and the
 * catalogue of the built-in models (`branchline models`).
 */
import { existsSync, statSync } from 'node:fs';
import { isAbsolute, resolve } from 'node:path';
import { pathToFileURL } from 'node:url';
import { models } from '../../discretisations/index.js';
import type { OptionSpec } from '../../discretisations/models/options.js';
import type { ProblemFactory } from '../problem/problem.js';
import type { ModelKind } from './case.js';
import { showValue } from './case-messages.js';
import { CaseError } from './errors.js';
import { codeModelLimit, notRegularFile, sizeText } from './read-file.js';

/**
 * The option that lets a case built from `resolved` (a sweep's value, a grid of a study, the same
 * case in a worker) load its code model: the one already allowed when `resolved` was read; none
 * for other models.
 */
export function ownCodeModel(resolved: { model: string; modelKind: ModelKind }): { loadCode?: string } {
  return resolved.modelKind === 'code' ? { loadCode: resolved.model } : {};
}

/** The absolute path of the code model a case's `model` value names (undefined for a built-in id). */
export function codeModelPath(model: unknown, baseDir: string): string | undefined {
  if (typeof model !== 'string') return undefined;
  const id = model.trim();
  if (Object.hasOwn(models, id) || !(/[\\/]/.test(id) || /\.(mjs|js|cjs)$/i.test(id))) return undefined;
  return isAbsolute(id) ? id : resolve(baseDir, id);
}

/** Import a code model (a module whose default export is the problem factory); CaseErrors on `model`. */
export async function loadCodeModel(abs: string, given: string, label: string): Promise<ProblemFactory> {
  if (!existsSync(abs)) throw new CaseError(label, 'model', `code model ${showValue(given)} not found (looked for ${abs})`);
  // importing a FIFO or a device would block or never end
  const odd = notRegularFile(abs);
  if (odd) throw new CaseError(label, 'model', `code model ${showValue(given)} cannot be loaded: ${odd}`);
  if (statSync(abs).size > codeModelLimit) throw new CaseError(label, 'model', `code model ${showValue(given)} is larger than the ${sizeText(codeModelLimit)} accepted for a code model`);
  let mod: Record<string, unknown>;
  try {
    mod = (await import(pathToFileURL(abs).href)) as Record<string, unknown>;
  } catch (e) {
    throw new CaseError(label, 'model', `code model ${showValue(given)} could not be loaded: ${(e as Error).message ?? String(e)}`);
  }
  const f = mod.default;
  if (typeof f !== 'function') {
    throw new CaseError(label, 'model', `code model ${showValue(given)} has no default export of a factory function (accepted: export default function (options) { return problem; })`);
  }
  const factory = f as ProblemFactory;
  return (options) => {
    try {
      return factory(options);
    } catch (e) {
      throw new Error(`code model ${showValue(given)} failed to build the problem: ${e instanceof Error ? e.message : String(e)}`);
    }
  };
}

/** Find the case field a model's error message is about (the models name options in words). */
export function modelErrorField(message: string, modelId: string, kind: ModelKind): { field: string; detail: string } {
  const stripped = message.replace(/^model '[^']*':\s*/, '');
  const memory = /^model '[^']*' on (grid \S+: the sparse LU would need.*)$/.exec(message);
  if (memory) return { field: 'grid.intervals', detail: memory[1] };
  const tries: [RegExp, (m: RegExpExecArray) => string][] = [
    [/^grid\.(intervals|length)(\[\d+\])?/, (m) => `grid.${m[1]}${m[2] ?? ''}`],
    [/^(reaction|diffusion|initial) for field '([^']+)'/, (m) => `${m[1]}.${m[2]}`],
    [/^boundary of field '([^']+)'/, (m) => `boundary.${m[1]}`],
    [/^boundary\b/, () => 'boundary'],
    [/^parameter(?: name)? '([^']+)'/, (m) => `parameters.${m[1]}`],
    [/option '([^']+)'/, (m) => (m[1] === 'parameters' ? 'parameters' : m[1])],
    [/^(field name|'[^']+' is both)/, () => 'fields'],
    [/grid has \d+ axes/, () => 'grid.intervals'],
  ];
  if (kind !== 'code') {
    for (const [re, f] of tries) {
      const m = re.exec(stripped);
      if (m) {
        const field = f(m);
        // the message already names the field: keep its wording without repeating the model
        return { field, detail: stripped.replace(/^grid\.(intervals|length)(\[\d+\])?( \(axis [xyz]\))?\s*/, '') };
      }
    }
  }
  return { field: 'model', detail: kind === 'code' ? message : `model '${modelId}': ${stripped}` };
}

/** The parameters and options of every model, for `branchline models`. */
export function modelCatalogue(): {
  id: string;
  description: string;
  dimensions: readonly number[];
  parameters: { name: string; default: number; description: string }[];
  options: readonly OptionSpec[];
  /** The monitors of the model with its default options (built on a small grid of its first dimension); null for expression models (they depend on the fields). */
  monitors: { name: string; description: string }[] | null;
  caution?: string;
}[] {
  return Object.entries(models).map(([id, e]) => ({
    id,
    description: e.description,
    dimensions: e.dimensions,
    parameters: e.parameters.map((p) => ({ name: p.name, default: p.default, description: p.description })),
    options: e.options.filter((o) => o.name !== 'grid'),
    monitors: id === 'reaction-diffusion' ? null : catalogueMonitors(e),
    ...(e.caution ? { caution: e.caution } : {}),
  }));
}

function catalogueMonitors(e: (typeof models)[string]): { name: string; description: string }[] {
  const dim = e.dimensions[0];
  const problem = e.factory({ grid: { intervals: new Array(dim).fill(8), length: new Array(dim).fill(1) } });
  return problem.monitors.map((m) => ({ name: m.name, description: m.description }));
}
