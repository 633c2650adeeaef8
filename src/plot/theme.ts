/**
 * The look of every branchline plot: one small palette, one type scale, one set of line styles.
 * Print-friendly: white paper, dark ink, colours that stay distinct in greyscale by lightness
 * and are told apart by dash and marker shape as well as by hue.
 */

export const FONT_FAMILY =
  '"Helvetica Neue", Helvetica, Arial, "Liberation Sans", "Nimbus Sans", "DejaVu Sans", sans-serif';

export const INK = '#1b2130';
export const MUTED = '#5d6676';
export const FAINT = '#8e96a3';
export const RULE = '#b9c0ca';
export const GRID = '#e8ebf0';
export const PAPER = '#ffffff';
export const PANEL = '#fcfcfd';
/** Caution accent (amber ink, readable on white and in greyscale). */
export const CAUTION = '#9a5b00';
/** Cells without a finite value in heat maps. */
export const MISSING = '#d9dbe0';

/**
 * Series colours, chosen for distinct hue and lightness: cobalt, rust, pine, plum, ochre,
 * raspberry, steel teal, graphite.
 */
export const SERIES = ['#1f5aa6', '#c0501b', '#2c7d4f', '#7b3b9c', '#a97a0f', '#c2386a', '#2f7f8c', '#4d5563'] as const;

export function seriesColour(index: number): string {
  return SERIES[((index % SERIES.length) + SERIES.length) % SERIES.length];
}

export const TYPE = {
  title: 17,
  subtitle: 12.5,
  axisTitle: 12.5,
  tick: 11,
  label: 11.5,
  legend: 11.5,
  footer: 11,
} as const;

/** Stroke dash patterns by stability: stable solid, unstable dashed, not computed dotted. */
export const STABILITY_STYLE = {
  stable: { dash: null as string | null, width: 2.4, cap: 'round' },
  unstable: { dash: '7 4.5' as string | null, width: 1.7, cap: 'butt' },
  unknown: { dash: '0.1 4.2' as string | null, width: 2.2, cap: 'round' },
} as const;

export type StabilityClass = keyof typeof STABILITY_STYLE;
