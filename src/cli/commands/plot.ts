import type { Command } from 'commander';
import type { CommandContext } from '../io.js';
import { existsSync } from 'node:fs';
import { join, relative, resolve } from 'node:path';
import { defaultMaxSolutionPlots, drawRunPlots } from '../../run/plots.js';
import { drawStudyPlots } from '../../refine/study.js';
import { drawSettlePlots } from '../../run/settle-plots.js';
import { drawFindPlots } from '../../run/find-states-plots.js';
import { runKind } from '../../run/start.js';

/** `branchline plot DIR`: (re)draw the SVG pictures of a run, or of a refinement study, from its files. */
export function registerPlot(program: Command, { io, setExit }: CommandContext): void {
  program
    .command('plot')
    .description('(re)draw the pictures of a run folder from its files: diagram.svg and plots/*.svg (or refine.svg and every grid of a refinement study)')
    .argument('<dir>', 'a run folder (with run.json) or a refinement-study folder (with refine.json)')
    .option('--monitor <name>', "monitor on the diagram's vertical axis (default: the case's plot.monitor, else max)")
    .option('--all', `a solution plot at every special point (default: at most ${defaultMaxSolutionPlots}, folds, Hopf and branch points first)`)
    .action((dir: string, opts: { monitor?: string; all?: boolean }) => {
      const abs = resolve(dir);
      const shown = relative(process.cwd(), abs) || '.';
      const where = shown.startsWith('..') ? abs : shown;
      const options = { ...(opts.monitor !== undefined ? { monitor: opts.monitor } : {}), ...(opts.all ? { maxSolutionPlots: Infinity } : {}) };
      if (existsSync(join(abs, 'refine.json')) && !existsSync(join(abs, 'run.json'))) {
        const r = drawStudyPlots(abs, options);
        for (const w of r.warnings) io.err(`branchline: warning: ${w}\n`);
        io.out(`Drew ${r.files.length} picture${r.files.length === 1 ? '' : 's'} in ${where}: ${summarise(r.files)}\n`);
        setExit(r.warnings.length ? 1 : 0);
        return;
      }
      if (runKind(abs) === 'find-states') {
        const r = drawFindPlots(abs, options);
        for (const w of r.warnings) io.err(`branchline: warning: ${w}\n`);
        io.out(`Drew ${r.files.length} picture${r.files.length === 1 ? '' : 's'} in ${where} (a search for steady states${r.monitor ? `; diagram: ${r.monitor}` : ''}): ${summarise(r.files)}\n`);
        setExit(r.warnings.length ? 1 : 0);
        return;
      }
      if (runKind(abs) === 'settle') {
        const r = drawSettlePlots(abs);
        for (const w of r.warnings) io.err(`branchline: warning: ${w}\n`);
        io.out(`Drew ${r.files.length} picture${r.files.length === 1 ? '' : 's'} in ${where} (a time integration): ${summarise(r.files)}\n`);
        setExit(r.warnings.length ? 1 : 0);
        return;
      }
      const r = drawRunPlots(abs, options);
      for (const w of r.warnings) io.err(`branchline: warning: ${w}\n`);
      for (const n of r.notes) io.err(`branchline: ${n}\n`);
      const diagram = r.plane ? `the curves in the plane of ${r.plane[0]} and ${r.plane[1]}` : `${r.monitor} against the continuation parameter`;
      io.out(`Drew ${r.files.length} picture${r.files.length === 1 ? '' : 's'} in ${where} (diagram: ${diagram}): ${summarise(r.files)}\n`);
      setExit(r.warnings.length ? 1 : 0);
    });
}

/** `diagram.svg, plots/ (3 files)`. */
function summarise(files: readonly string[]): string {
  const top = files.filter((f) => !f.includes('/'));
  const groups = new Map<string, number>();
  for (const f of files) {
    if (!f.includes('/')) continue;
    const g = f.slice(0, f.indexOf('/') + 1);
    groups.set(g, (groups.get(g) ?? 0) + 1);
  }
  return [...top, ...[...groups].map(([g, n]) => `${g} (${n} file${n === 1 ? '' : 's'})`)].join(', ');
}
