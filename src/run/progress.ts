/**
 * Progress of running cases, as the user sees it on stderr:
 *
 *  - on a terminal, one cli-progress bar per running case: the point on the current branch
 *    against `max-points`, the branch, the current parameter value and step size, points per
 *    second, and the time left until the point limit (an upper bound: branches usually end
 *    earlier, at a bound or a stop value); log lines are printed above the bars;
 *  - elsewhere (a log file, a pipe, a batch system), the same facts as a plain line per case
 *    every `intervalSeconds` (default 10 s), plus the log lines as they come;
 *  - with `quiet`, no progress and no log lines but warnings.
 *
 * The view only formats; the numbers come from runCase's progress hook (ProgressInfo).
 */
import cliProgress from 'cli-progress';
import type { ProgressInfo } from './run-case.js';
import { printable } from './errors.js';
import { formatValue } from './summary.js';

export interface ProgressView {
  /** A case starts (or resumes) running. */
  start(name: string, parameter: string, maxPoints: number): void;
  update(name: string, p: ProgressInfo): void;
  /** A log line from a case (`name` is shown when several cases are on screen). */
  log(name: string | undefined, level: 'info' | 'warning', message: string): void;
  /** A case ended (its bar goes away). */
  end(name: string): void;
  /** Tear down (bars restored to a normal terminal). */
  close(): void;
}

/** A view that draws nothing and passes log lines (and progress, if asked) on: worker processes, a study's grids. */
export function logView(log: (level: 'info' | 'warning', message: string) => void, update: (p: ProgressInfo) => void = () => {}): ProgressView {
  return {
    start() {},
    update: (_name, p) => update(p),
    log: (_name, level, message) => log(level, message),
    end() {},
    close() {},
  };
}

export interface ProgressOptions {
  /** Draw bars (stderr is a terminal). */
  tty: boolean;
  quiet: boolean;
  /** Plain-line output (stderr). */
  write: (s: string) => void;
  /** Terminal stream for the bars (default process.stderr). */
  stream?: NodeJS.WritableStream;
  /** Seconds between plain progress lines per case (default 10). */
  intervalSeconds?: number;
  /** Prefix log lines with the case name (batches). */
  showNames: boolean;
  now?: () => number;
}

interface Track {
  parameter: string;
  maxPoints: number;
  started: number;
  firstPoints: number | undefined;
  lastLine: number;
  bar?: cliProgress.SingleBar;
}

function duration(s: number): string {
  if (!Number.isFinite(s) || s < 0) return '?';
  if (s < 60) return `${Math.ceil(s)} s`;
  const m = Math.floor(s / 60);
  if (m < 60) return `${m} min ${Math.round(s - 60 * m)} s`;
  const h = Math.floor(m / 60);
  return `${h} h ${m % 60} min`;
}

/** Points per second and the time left to the point limit on the current branch. */
function rates(t: Track, p: ProgressInfo, now: number): { rate: number; eta: number } {
  if (t.firstPoints === undefined) t.firstPoints = p.points - 1;
  const seconds = (now - t.started) / 1000;
  const done = p.points - t.firstPoints;
  const rate = seconds > 0 ? done / seconds : NaN;
  const left = Math.max(0, p.maxPoints - 1 - p.index);
  return { rate, eta: rate > 0 ? left / rate : NaN };
}

function rateText(rate: number): string {
  return Number.isFinite(rate) ? formatValue(rate, rate < 10 ? 2 : 3) : '?';
}

/** Draw once more, so that log lines still waiting for the next redraw are shown before the bars go. */
function flush(multi: cliProgress.MultiBar): void {
  (multi as unknown as { update(): void }).update();
}

export function progressView(o: ProgressOptions): ProgressView {
  const now = o.now ?? Date.now;
  const interval = (o.intervalSeconds ?? 10) * 1000;
  const tracks = new Map<string, Track>();
  let multi: cliProgress.MultiBar | undefined;

  const bars = (): cliProgress.MultiBar => {
    if (!multi) {
      multi = new cliProgress.MultiBar(
        {
          stream: o.stream ?? process.stderr,
          format: '{name} {bar} branch {branch}, point {value}/{total} | {parameter} = {current} | step {step} | {rate} points/s | limit in {left}',
          barsize: 16,
          hideCursor: true,
          clearOnComplete: true,
          stopOnComplete: false,
          autopadding: true,
          fps: 5,
        },
        cliProgress.Presets.shades_classic,
      );
    }
    return multi;
  };

  // log lines go to the terminal past the `write` channel when bars are shown: escape them here too
  const line = (name: string | undefined, text: string): string => printable(`branchline: ${o.showNames && name ? `${name}: ` : ''}${text}\n`);

  return {
    start(name, parameter, maxPoints) {
      const t: Track = { parameter, maxPoints, started: now(), firstPoints: undefined, lastLine: now() };
      tracks.set(name, t);
      if (o.quiet) return;
      if (o.tty) t.bar = bars().create(maxPoints, 0, { name, branch: 1, parameter, current: '-', step: '-', rate: '?', left: '?' });
    },
    update(name, p) {
      const t = tracks.get(name);
      if (!t || o.quiet) return;
      const time = now();
      const { rate, eta } = rates(t, p, time);
      const payload = {
        name,
        branch: p.branch,
        parameter: t.parameter,
        current: formatValue(p.parameter, 7),
        step: formatValue(p.step, 3),
        rate: rateText(rate),
        left: duration(eta),
      };
      if (t.bar) {
        t.bar.setTotal(p.maxPoints);
        t.bar.update(Math.min(p.index + 1, p.maxPoints), payload);
      } else if (time - t.lastLine >= interval) {
        t.lastLine = time;
        o.write(
          line(
            name,
            `${o.showNames ? '' : `${name}: `}branch ${p.branch}, point ${p.index + 1} of at most ${p.maxPoints}, ${t.parameter} = ${payload.current}, step ${payload.step}, ${payload.rate} points/s, ${p.points} points in all, point limit in ${payload.left} at most`,
          ),
        );
      }
    },
    log(name, level, message) {
      if (o.quiet && level !== 'warning') return;
      const text = line(name, `${level === 'warning' ? 'warning: ' : ''}${message}`);
      if (multi && o.tty) multi.log(text);
      else o.write(text);
    },
    end(name) {
      const t = tracks.get(name);
      tracks.delete(name);
      if (t?.bar && multi) {
        multi.remove(t.bar);
        if (tracks.size === 0) {
          flush(multi);
          multi.stop();
          multi = undefined;
        }
      }
    },
    close() {
      if (multi) flush(multi);
      multi?.stop();
      multi = undefined;
      tracks.clear();
    },
  };
}
