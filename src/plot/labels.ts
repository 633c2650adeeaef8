/**
 * Greedy label placement: each label tries positions around its marker (near ones first, then
 * farther ones with a leader line) and takes the cheapest, where cost counts overlap with
 * labels already placed, with markers, with the drawn curves and with the figure edge.
 */

export interface Box {
  x0: number;
  y0: number;
  x1: number;
  y1: number;
}

export interface LabelRequest {
  /** Marker centre in pixels. */
  readonly x: number;
  readonly y: number;
  /** Marker radius (the label keeps clear of it). */
  readonly radius: number;
  readonly width: number;
  readonly height: number;
}

export interface LabelPlacement {
  readonly box: Box;
  /** True when the label sits away from its marker and should be joined to it by a line. */
  readonly leader: boolean;
}

/** A polyline segment in pixels: x0, y0, x1, y1. */
export type Segment = readonly [number, number, number, number];

function overlapArea(a: Box, b: Box): number {
  const w = Math.min(a.x1, b.x1) - Math.max(a.x0, b.x0);
  const h = Math.min(a.y1, b.y1) - Math.max(a.y0, b.y0);
  return w > 0 && h > 0 ? w * h : 0;
}

/** Does the segment cross or touch the box? (Liang–Barsky clipping.) */
export function segmentHitsBox(s: Segment, b: Box): boolean {
  const [x0, y0, x1, y1] = s;
  const dx = x1 - x0;
  const dy = y1 - y0;
  let t0 = 0;
  let t1 = 1;
  const p = [-dx, dx, -dy, dy];
  const q = [x0 - b.x0, b.x1 - x0, y0 - b.y0, b.y1 - y0];
  for (let i = 0; i < 4; i++) {
    if (p[i] === 0) {
      if (q[i] < 0) return false;
    } else {
      const r = q[i] / p[i];
      if (p[i] < 0) {
        if (r > t1) return false;
        if (r > t0) t0 = r;
      } else {
        if (r < t0) return false;
        if (r < t1) t1 = r;
      }
    }
  }
  return true;
}

function candidates(r: LabelRequest): { box: Box; leader: boolean; order: number }[] {
  const out: { box: Box; leader: boolean; order: number }[] = [];
  const { x, y, width: w, height: h } = r;
  const rings = [r.radius + 4, r.radius + 22, r.radius + 42];
  let order = 0;
  rings.forEach((g, ring) => {
    const d = g * 0.72;
    const positions: [number, number][] = [
      [x + d, y - d - h], // upper right
      [x + g, y - h / 2], // right
      [x + d, y + d], // lower right
      [x - d - w, y - d - h], // upper left
      [x - g - w, y - h / 2], // left
      [x - d - w, y + d], // lower left
      [x - w / 2, y - g - h], // above
      [x - w / 2, y + g], // below
    ];
    for (const [bx, by] of positions) {
      out.push({ box: { x0: bx, y0: by, x1: bx + w, y1: by + h }, leader: ring > 0, order: order++ });
    }
  });
  return out;
}

/**
 * Place labels one after another (in the given order). `bounds` is where labels may go;
 * `segments` are the drawn curves; markers of every request are obstacles too.
 */
export function placeLabels(
  requests: readonly LabelRequest[],
  bounds: Box,
  segments: readonly Segment[],
  /** Markers drawn without a label: obstacles as well. */
  otherMarkers: readonly Box[] = [],
): LabelPlacement[] {
  const markerBoxes: Box[] = requests.map((r) => ({
    x0: r.x - r.radius - 1,
    y0: r.y - r.radius - 1,
    x1: r.x + r.radius + 1,
    y1: r.y + r.radius + 1,
  }));
  markerBoxes.push(...otherMarkers);
  const placed: Box[] = [];
  const result: LabelPlacement[] = [];
  for (const r of requests) {
    let best: { cost: number; box: Box; leader: boolean } | null = null;
    for (const c of candidates(r)) {
      const b = c.box;
      const area = (b.x1 - b.x0) * (b.y1 - b.y0);
      let cost = c.order * 0.02 + (c.leader ? 1.5 : 0);
      // Outside the allowed area.
      const inside = overlapArea(b, bounds);
      cost += (40 * (area - inside)) / area;
      for (const p of placed) cost += (30 * overlapArea(b, p)) / area;
      for (const m of markerBoxes) cost += (25 * overlapArea(b, m)) / area;
      if (best !== null && cost >= best.cost) continue;
      // Curves under the label: count crossing segments (coarse, but what the eye sees).
      let hits = 0;
      for (const s of segments) {
        if (Math.max(s[0], s[2]) < b.x0 || Math.min(s[0], s[2]) > b.x1) continue;
        if (Math.max(s[1], s[3]) < b.y0 || Math.min(s[1], s[3]) > b.y1) continue;
        if (segmentHitsBox(s, b)) hits++;
      }
      cost += Math.min(hits, 20) * 0.6;
      if (best === null || cost < best.cost) best = { cost, box: b, leader: c.leader };
    }
    const chosen = best as { box: Box; leader: boolean };
    placed.push(chosen.box);
    result.push({ box: chosen.box, leader: chosen.leader });
  }
  return result;
}
