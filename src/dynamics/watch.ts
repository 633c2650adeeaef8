/**
 * Watching a time integration for what it is doing besides settling: sustained oscillation (with
 * its period and amplitude), damped oscillation, and the trend of the residual (how fast the
 * state is still changing when the time runs out). Plain state, so it can be checkpointed.
 *
 * Oscillation is read off the monitors (max, min and L2 norm per field, and model monitors):
 * every accepted step adds a sample per monitor; three samples with a larger middle one (or a
 * smaller) mark an extremum, placed at the vertex of the parabola through them. A monitor
 * oscillates steadily when its last `cycles` periods (times between maxima) agree within
 * `agreement` and so do its last `cycles` amplitudes (maximum minus the following minimum), the
 * amplitude standing clear of round-off. A damped oscillation has regular periods but shrinking
 * amplitudes; a state that settles has no extrema at all after a while.
 */

export interface Extremum {
  t: number;
  v: number;
}

interface SignalState {
  name: string;
  /** The last three samples (t, v), oldest first. */
  samples: [number, number][];
  maxima: Extremum[];
  minima: Extremum[];
}

export interface WatchState {
  signals: SignalState[];
  /** (t, residual) samples, thinned to at most `trendSamples`, for the trend of the residual. */
  trend: [number, number][];
  /** Keep every `trendStride`-th sample (doubles when the buffer fills). */
  trendStride: number;
  trendCount: number;
  /** The latest (t, residual), whatever the stride. */
  latest: [number, number] | null;
}

export interface OscillationReport {
  /** Mean of the last periods (time between successive maxima). */
  period: number;
  /** Relative spread of those periods. */
  periodSpread: number;
  /** Amplitude (max − min over a period) per oscillating monitor. */
  amplitudes: Record<string, number>;
  /** The monitor the period was read from. */
  monitor: string;
  /** Amplitude ratio from one period to the next (1: steady; < 1: damped). */
  amplitudeRatio: number;
}

/** Periods and amplitudes compared for a steady oscillation. */
export const cycles = 4;
/** Relative agreement asked of the periods and amplitudes. */
export const agreement = 0.02;
const keep = 10;
const trendSamples = 64;

export function emptyWatch(names: readonly string[]): WatchState {
  return { signals: names.map((name) => ({ name, samples: [], maxima: [], minima: [] })), trend: [], trendStride: 1, trendCount: 0, latest: null };
}

/** The vertex of the parabola through three samples (t0 < t1 < t2). */
export function parabolaVertex(a: [number, number], b: [number, number], c: [number, number]): Extremum {
  const d1 = (b[1] - a[1]) / (b[0] - a[0]);
  const d2 = (c[1] - b[1]) / (c[0] - b[0]);
  const q = (d2 - d1) / (c[0] - a[0]);
  if (q === 0 || !Number.isFinite(q)) return { t: b[0], v: b[1] };
  let t = (a[0] + b[0]) / 2 - d1 / (2 * q);
  t = Math.min(Math.max(t, a[0]), c[0]);
  return { t, v: a[1] + d1 * (t - a[0]) + q * (t - a[0]) * (t - b[0]) };
}

/** Add one accepted step's monitor values (in the order of `emptyWatch`) and its residual. */
export function observe(w: WatchState, t: number, values: ArrayLike<number>, residual: number): void {
  w.signals.forEach((s, k) => {
    const v = values[k];
    if (!Number.isFinite(v)) return;
    s.samples.push([t, v]);
    if (s.samples.length > 3) s.samples.shift();
    if (s.samples.length < 3) return;
    const [a, b, c] = s.samples;
    if (b[1] > a[1] && b[1] >= c[1]) pushLimited(s.maxima, parabolaVertex(a, b, c));
    else if (b[1] < a[1] && b[1] <= c[1]) pushLimited(s.minima, parabolaVertex(a, b, c));
  });
  if (Number.isFinite(residual) && residual > 0) {
    w.latest = [t, residual];
    if (w.trendCount++ % w.trendStride === 0) w.trend.push([t, residual]);
    if (w.trend.length >= trendSamples) {
      w.trend = w.trend.filter((_x, i) => i % 2 === 0);
      w.trendStride *= 2;
    }
  }
}

function pushLimited(list: Extremum[], e: Extremum): void {
  list.push(e);
  if (list.length > keep) list.shift();
}

function spread(xs: readonly number[]): number {
  const mean = xs.reduce((a, b) => a + b, 0) / xs.length;
  return mean === 0 ? Infinity : (Math.max(...xs) - Math.min(...xs)) / Math.abs(mean);
}

/** Periods and amplitudes of one monitor's last `count` cycles (undefined when fewer were seen). */
function lastCycles(s: SignalState, count: number): { periods: number[]; amplitudes: number[] } | undefined {
  if (s.maxima.length < count + 1) return undefined;
  const maxima = s.maxima.slice(-(count + 1));
  const periods: number[] = [];
  const amplitudes: number[] = [];
  for (let k = 1; k < maxima.length; k++) {
    periods.push(maxima[k].t - maxima[k - 1].t);
    // the lowest minimum between the two maxima
    const between = s.minima.filter((m) => m.t > maxima[k - 1].t && m.t < maxima[k].t);
    if (between.length === 0) return undefined;
    amplitudes.push(maxima[k - 1].v - Math.min(...between.map((m) => m.v)));
  }
  return { periods, amplitudes };
}

/**
 * A steady oscillation, when one monitor shows `cycles` regular periods of equal amplitude; the
 * report gives the amplitude of every monitor that oscillates with the same period.
 */
export function steadyOscillation(w: WatchState): OscillationReport | undefined {
  let best: OscillationReport | undefined;
  for (const s of w.signals) {
    const c = lastCycles(s, cycles);
    if (!c) continue;
    const scale = Math.max(...s.maxima.slice(-cycles).map((m) => Math.abs(m.v)), 1e-300);
    const amplitude = c.amplitudes.reduce((a, b) => a + b, 0) / c.amplitudes.length;
    if (!(amplitude > 1e-6 * scale)) continue;
    const ps = spread(c.periods);
    if (ps > agreement || spread(c.amplitudes) > agreement) continue;
    const period = c.periods.reduce((a, b) => a + b, 0) / c.periods.length;
    if (!best || ps < best.periodSpread) {
      const ratio = c.amplitudes[c.amplitudes.length - 1] / c.amplitudes[c.amplitudes.length - 2];
      best = { period, periodSpread: ps, amplitudes: {}, monitor: s.name, amplitudeRatio: ratio };
    }
  }
  if (!best) return undefined;
  for (const s of w.signals) {
    const c = lastCycles(s, 2);
    if (!c) continue;
    const p = c.periods[c.periods.length - 1];
    if (Math.abs(p - best.period) <= 5 * agreement * best.period) best.amplitudes[s.name] = c.amplitudes[c.amplitudes.length - 1];
  }
  return best;
}

/**
 * An oscillation that is still going on but not steady (damped or growing): regular periods, the
 * amplitude changing by `amplitudeRatio` per period. Undefined when the monitors show none.
 */
export function transientOscillation(w: WatchState, now: number): OscillationReport | undefined {
  let best: OscillationReport | undefined;
  for (const s of w.signals) {
    const c = lastCycles(s, 3);
    if (!c) continue;
    const period = c.periods.reduce((a, b) => a + b, 0) / c.periods.length;
    // the last maximum must be recent: an oscillation that died out long ago does not count
    if (now - s.maxima[s.maxima.length - 1].t > 3 * period) continue;
    const ps = spread(c.periods);
    if (ps > 0.1) continue;
    const ratio = c.amplitudes[c.amplitudes.length - 1] / c.amplitudes[c.amplitudes.length - 2];
    if (!best || ps < best.periodSpread) best = { period, periodSpread: ps, amplitudes: { [s.name]: c.amplitudes[c.amplitudes.length - 1] }, monitor: s.name, amplitudeRatio: ratio };
  }
  return best;
}

/**
 * How fast the residual has been falling (or rising) recently: the time it takes to change by a
 * factor of ten over the last fifth of the integration (positive: falling), or undefined.
 */
export function residualTrend(w: WatchState): { timePerDecade: number; falling: boolean } | undefined {
  const n = w.trend.length;
  if (n < 4 || !w.latest) return undefined;
  const to = w.latest;
  const tEnd = to[0];
  const tStart = w.trend[0][0];
  // the last sample at or before the start of the last fifth (at least one interval back)
  const before = w.trend.filter(([t]) => t <= tEnd - 0.2 * (tEnd - tStart));
  const from = before.length ? before[before.length - 1] : w.trend[0];
  if (to[0] <= from[0]) return undefined;
  const slope = (Math.log10(to[1]) - Math.log10(from[1])) / (to[0] - from[0]);
  if (slope === 0 || !Number.isFinite(slope)) return undefined;
  return { timePerDecade: Math.abs(1 / slope), falling: slope < 0 };
}
