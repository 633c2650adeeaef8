/**
 * The branchline sequential colour ramp ("tideline"): from deep indigo through blue and teal to
 * sage and a warm paper white. Defined by stops in OKLCH (the polar form of OKLab, Ottosson
 * 2020) with lightness rising linearly, so equal steps in value are roughly equal steps in
 * perceived lightness and the map reads correctly in greyscale. Converted to sRGB once into a
 * 256-entry table; out-of-gamut colours are brought in by reducing chroma at fixed L and hue.
 */

interface Stop {
  readonly t: number;
  readonly L: number;
  readonly C: number;
  /** Hue in degrees; interpolated linearly between stops as given (no wrap-around). */
  readonly h: number;
}

const STOPS: readonly Stop[] = [
  { t: 0, L: 0.2, C: 0.06, h: 285 },
  { t: 0.25, L: 0.39, C: 0.1, h: 260 },
  { t: 0.5, L: 0.58, C: 0.095, h: 210 },
  { t: 0.75, L: 0.77, C: 0.1, h: 135 },
  { t: 1, L: 0.96, C: 0.055, h: 95 },
];

function oklabToLinearSrgb(L: number, a: number, b: number): [number, number, number] {
  const l_ = L + 0.3963377774 * a + 0.2158037573 * b;
  const m_ = L - 0.1055613458 * a - 0.0638541728 * b;
  const s_ = L - 0.0894841775 * a - 1.291485548 * b;
  const l = l_ * l_ * l_;
  const m = m_ * m_ * m_;
  const s = s_ * s_ * s_;
  return [
    4.0767416621 * l - 3.3077115913 * m + 0.2309699292 * s,
    -1.2684380046 * l + 2.6097574011 * m - 0.3413193965 * s,
    -0.0041960863 * l - 0.7034186147 * m + 1.707614701 * s,
  ];
}

/** OKLab lightness of an sRGB colour (components 0..1), for checks. */
export function oklabLightness(r: number, g: number, b: number): number {
  const lin = (c: number): number => (c <= 0.04045 ? c / 12.92 : Math.pow((c + 0.055) / 1.055, 2.4));
  const R = lin(r);
  const G = lin(g);
  const B = lin(b);
  const l = Math.cbrt(0.4122214708 * R + 0.5363011953 * G + 0.0514459929 * B);
  const m = Math.cbrt(0.2119034982 * R + 0.6806995451 * G + 0.1073969566 * B);
  const s = Math.cbrt(0.0883024619 * R + 0.2817188376 * G + 0.6299787005 * B);
  return 0.2104542553 * l + 0.793617785 * m - 0.0040720468 * s;
}

function gammaEncode(c: number): number {
  const x = Math.min(1, Math.max(0, c));
  return x <= 0.0031308 ? 12.92 * x : 1.055 * Math.pow(x, 1 / 2.4) - 0.055;
}

function inGamut(rgb: readonly number[]): boolean {
  return rgb.every((c) => c >= -1e-6 && c <= 1 + 1e-6);
}

function oklchToSrgb(L: number, C: number, h: number): [number, number, number] {
  const hr = (h * Math.PI) / 180;
  let c = C;
  let rgb = oklabToLinearSrgb(L, c * Math.cos(hr), c * Math.sin(hr));
  if (!inGamut(rgb)) {
    let lo = 0;
    let hi = C;
    for (let i = 0; i < 30; i++) {
      c = 0.5 * (lo + hi);
      rgb = oklabToLinearSrgb(L, c * Math.cos(hr), c * Math.sin(hr));
      if (inGamut(rgb)) lo = c;
      else hi = c;
    }
    rgb = oklabToLinearSrgb(L, lo * Math.cos(hr), lo * Math.sin(hr));
  }
  return [gammaEncode(rgb[0]), gammaEncode(rgb[1]), gammaEncode(rgb[2])];
}

function stopAt(t: number): [number, number, number] {
  let k = 1;
  while (k < STOPS.length - 1 && STOPS[k].t < t) k++;
  const a = STOPS[k - 1];
  const b = STOPS[k];
  const u = (t - a.t) / (b.t - a.t);
  return [a.L + u * (b.L - a.L), a.C + u * (b.C - a.C), a.h + u * (b.h - a.h)];
}

function hex2(v: number): string {
  return Math.round(v * 255)
    .toString(16)
    .padStart(2, '0');
}

export const COLOUR_LEVELS = 256;

/** The ramp as 256 sRGB hex colours, darkest first. */
export const RAMP: readonly string[] = (() => {
  const out: string[] = [];
  for (let i = 0; i < COLOUR_LEVELS; i++) {
    const t = i / (COLOUR_LEVELS - 1);
    const [L, C, h] = stopAt(t);
    const [r, g, b] = oklchToSrgb(L, C, h);
    out.push(`#${hex2(r)}${hex2(g)}${hex2(b)}`);
  }
  return out;
})();

/** Table index (0..255) of a position t in [0, 1] (clamped). */
export function rampIndex(t: number): number {
  const x = Number.isFinite(t) ? Math.min(1, Math.max(0, t)) : 0;
  return Math.round(x * (COLOUR_LEVELS - 1));
}

/** Colour of a position t in [0, 1] (clamped). */
export function rampColour(t: number): string {
  return RAMP[rampIndex(t)];
}
