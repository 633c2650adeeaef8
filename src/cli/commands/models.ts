import type { Command } from 'commander';
import type { CommandContext } from '../io.js';
import { modelCatalogue } from '../../run/case.js';

/** The `initial:` forms in one line, with the model's named states when it has some. */
export function initialFormsText(m: ReturnType<typeof modelCatalogue>[number]): string {
  const named = m.options.find((o) => o.name === 'initial')?.choices;
  const coords = ['x', 'y', 'z'].slice(0, Math.max(...m.dimensions)).join(', ');
  return (
    (named ? `a named state, ${named.join(' | ')} (default ${named[0]}); or ` : '') +
    `per field a number or an expression in ${coords} and the parameters, extra unknowns by name, noise: {amplitude, seed} on top, from: ${named ? 'a named state or ' : ''}a .npy file (the state a continuation starts Newton from and a time integration starts from)`
  );
}

/** `branchline models`: the built-in models with their parameters and keys. */
export function registerModels(program: Command, { io }: CommandContext): void {
  program
    .command('models')
    .description('list the built-in models with their parameters, defaults and case-file keys')
    .action(() => {
      const lines: string[] = ['Models (the id goes in a case file as `model: <id>`; a code model is `model: ./file.mjs`):', ''];
      for (const m of modelCatalogue()) {
        lines.push(`${m.id}  (${m.dimensions.map((d) => `${d}D`).join(', ')})`);
        lines.push(`  ${m.description}`);
        if (m.parameters.length) {
          lines.push(`  parameters: ${m.parameters.map((p) => `${p.name} = ${p.default}`).join(', ')}`);
          for (const p of m.parameters) lines.push(`    ${p.name}: ${p.description}`);
        } else {
          lines.push('  parameters: declared in the case file (parameters: {name: default, ...})');
        }
        for (const o of m.options) {
          if (o.name === 'initial') continue;
          lines.push(`  key ${o.name}: ${o.choices ? `${o.choices.join(' | ')} (default ${o.choices[0]}); ` : ''}${o.description}`);
        }
        lines.push(`  key initial: ${initialFormsText(m)}`);
        if (m.monitors) {
          lines.push(`  monitors (CSV columns, stop-when, plot.monitor): ${m.monitors.map((x) => x.name).join(', ')}`);
          for (const x of m.monitors) lines.push(`    ${x.name}: ${x.description}`);
        } else {
          lines.push('  monitors: per field f, max:f, min:f and l2-norm:f (plain max, min, l2-norm with one field); l2-norm is √(∫f²), growing with the domain');
        }
        if (m.caution) lines.push(`  caution: ${m.caution}`);
        lines.push('');
      }
      io.out(lines.join('\n'));
    });

}
