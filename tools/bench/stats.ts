/** Timing helpers for the benchmark harness (never used in tests). */
import { performance } from 'node:perf_hooks';

export function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m] : (s[m - 1] + s[m]) / 2;
}

/**
 * Draw events until `n` points have come (or the run ended) and stop there: the generator is not
 * asked again after the n-th point, since asking would compute the next step and charge its work
 * to the timed ones. Returns the number of points seen; `onPoint` sees each.
 */
export function takePoints<E extends { type: string }>(events: Iterator<E, unknown>, n: number, onPoint?: (e: E) => void): number {
  let done = 0;
  while (done < n) {
    const r = events.next();
    if (r.done) break;
    if (r.value.type !== 'point') continue;
    done++;
    onPoint?.(r.value);
  }
  return done;
}

/** Run `fn` once as a warm-up, then `repeats` times; return the median seconds. */
export function timeMedian(fn: () => void, repeats = 5): number {
  fn();
  const t: number[] = [];
  for (let r = 0; r < repeats; r++) {
    const t0 = performance.now();
    fn();
    t.push((performance.now() - t0) / 1000);
  }
  return median(t);
}

/**
 * Like timeMedian, in CPU seconds of this process (user + system) and the minimum of the
 * repeats: on a machine shared with other work, wall-clock times stretch with the load while the
 * CPU time of a single-threaded computation barely does.
 */
export function cpuMin(fn: () => void, repeats = 5): number {
  fn();
  let best = Infinity;
  for (let r = 0; r < repeats; r++) {
    const t0 = process.cpuUsage();
    fn();
    const d = process.cpuUsage(t0);
    best = Math.min(best, (d.user + d.system) / 1e6);
  }
  return best;
}

export function seconds(x: number): string {
  if (!Number.isFinite(x)) return '-';
  if (x >= 1) return x.toFixed(2) + ' s';
  if (x >= 1e-3) return (x * 1e3).toFixed(1) + ' ms';
  return (x * 1e6).toFixed(0) + ' µs';
}

/** Format rows as an aligned plain-text table. */
export function table(header: string[], rows: (string | number)[][]): string {
  const cells = [header, ...rows.map((r) => r.map(String))];
  const widths = header.map((_, c) => Math.max(...cells.map((r) => r[c].length)));
  const line = (r: string[]) => r.map((x, c) => (c === 0 ? x.padEnd(widths[c]) : x.padStart(widths[c]))).join('  ');
  return [line(header), widths.map((w) => '-'.repeat(w)).join('  '), ...cells.slice(1).map(line)].join('\n');
}
