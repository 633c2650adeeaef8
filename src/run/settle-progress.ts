/**
 * Progress of a time integration on stderr, in the manner of runs (./progress.ts): a cli-progress
 * bar on a terminal, a plain line every `intervalSeconds` otherwise, nothing but warnings when
 * quiet. The bar shows how far the state has settled — the residual's way down to the steady
 * tolerance on a logarithmic scale, or the time's way to the limit, whichever is further — with
 * the time, the step size, the residual and steps per second. The view only formats.
 */
import cliProgress from 'cli-progress';
import type { SettleProgress } from './settle.js';
import { formatValue } from './summary.js';

export interface SettleView {
  progress(p: SettleProgress): void;
  /** A log line (the name is for the signature runs share; one integration is shown at a time). */
  log(name: string | undefined, level: 'info' | 'warning', message: string): void;
  close(): void;
}

export interface SettleViewOptions {
  tty: boolean;
  quiet: boolean;
  write: (s: string) => void;
  stream?: NodeJS.WritableStream;
  intervalSeconds?: number;
  now?: () => number;
}

/** Settled fraction in [0, 1]: the larger of the residual's (log scale, from the first) and the time's. */
export function settledFraction(p: SettleProgress, firstResidual: number): number {
  const byTime = p.time / p.end;
  const span = Math.log(firstResidual / p.steadyTolerance);
  const byResidual = span > 0 && p.residual > 0 ? Math.log(firstResidual / p.residual) / span : 0;
  return Math.min(1, Math.max(0, byTime, byResidual));
}

export function settleView(o: SettleViewOptions): SettleView {
  const now = o.now ?? Date.now;
  const interval = (o.intervalSeconds ?? 10) * 1000;
  const started = now();
  let lastLine = started;
  let first: number | undefined;
  let firstStep: number | undefined;
  let best = 0;
  let bar: cliProgress.SingleBar | undefined;
  const line = (text: string): string => `branchline: ${text}\n`;
  return {
    progress(p) {
      if (o.quiet) return;
      first ??= p.residual;
      firstStep ??= p.step - 1;
      best = Math.max(best, settledFraction(p, first));
      const time = now();
      const rate = (p.step - firstStep) / Math.max(1e-3, (time - started) / 1000);
      const payload = {
        t: formatValue(p.time, 6),
        end: formatValue(p.end, 4),
        h: formatValue(p.stepSize, 3),
        residual: p.residual.toExponential(1),
        goal: p.steadyTolerance.toExponential(0),
        rate: formatValue(rate, rate < 10 ? 2 : 3),
      };
      if (o.tty) {
        bar ??= new cliProgress.SingleBar(
          {
            stream: o.stream ?? process.stderr,
            format: 'settling {bar} t = {t} of {end} | step {h} | residual {residual} → {goal} | {rate} steps/s',
            barsize: 16,
            hideCursor: true,
            clearOnComplete: true,
            fps: 5,
          },
          cliProgress.Presets.shades_classic,
        );
        if (!bar.isActive) bar.start(1000, 0, payload);
        bar.update(Math.round(1000 * best), payload);
      } else if (time - lastLine >= interval) {
        lastLine = time;
        o.write(line(`step ${p.step}, t = ${payload.t} of ${payload.end}, step size ${payload.h}, residual ${payload.residual} (steady below ${payload.goal}), ${payload.rate} steps/s`));
      }
    },
    log(_name, level, message) {
      if (o.quiet && level !== 'warning') return;
      const text = line(`${level === 'warning' ? 'warning: ' : ''}${message}`);
      if (bar?.isActive) bar.stop();
      o.write(text);
    },
    close() {
      bar?.stop();
    },
  };
}
