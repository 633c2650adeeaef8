/**
 * Figure chrome shared by every plot: title and subtitle at the top, an optional caution in
 * the footer.
 */
import { el, num, text, wrapText } from './svg.js';
import { CAUTION, INK, MUTED, RULE, TYPE } from './theme.js';

export const SIDE = 24;

export interface Block {
  readonly markup: string;
  readonly height: number;
}

/** Title (bold) and wrapped subtitle lines, starting at the top of the figure. */
export function header(width: number, title: string, subtitle?: string): Block {
  const parts: string[] = [];
  const titleLines = wrapText(title, TYPE.title * 1.07, width - 2 * SIDE);
  let y = 14;
  for (const line of titleLines) {
    y += TYPE.title + 4;
    parts.push(text(SIDE, y, line, { 'font-size': TYPE.title, 'font-weight': 600, fill: INK }));
  }
  if (subtitle) {
    y += 2;
    for (const line of wrapText(subtitle, TYPE.subtitle, width - 2 * SIDE)) {
      y += TYPE.subtitle + 5;
      parts.push(text(SIDE, y, line, { 'font-size': TYPE.subtitle, fill: MUTED }));
    }
  }
  return { markup: el('g', { 'data-role': 'header' }, parts.join('')), height: y + 14 };
}

/**
 * Footer with the caution (when given), placed at `top`: a hairline rule, a small warning
 * triangle and the wrapped caution text.
 */
export function footer(width: number, top: number, caution?: string): Block {
  if (!caution || caution.trim() === '') return { markup: '', height: 8 };
  const indent = SIDE + 20;
  const lines = wrapText(caution.trim(), TYPE.footer, width - indent - SIDE);
  const parts: string[] = [];
  parts.push(el('path', { d: `M${SIDE} ${num(top + 8)}H${num(width - SIDE)}`, stroke: RULE, 'stroke-width': 0.8 }));
  const ty = top + 8 + 12;
  // Warning triangle drawn as a path (no reliance on a font glyph).
  const tx = SIDE + 1;
  parts.push(
    el('path', {
      d: `M${num(tx + 6.5)} ${num(ty)}L${num(tx + 13)} ${num(ty + 11.5)}H${num(tx)}Z`,
      fill: 'none',
      stroke: CAUTION,
      'stroke-width': 1.4,
      'stroke-linejoin': 'round',
    }),
    el('path', {
      d: `M${num(tx + 6.5)} ${num(ty + 3.8)}V${num(ty + 7.6)}M${num(tx + 6.5)} ${num(ty + 9.2)}V${num(ty + 9.6)}`,
      stroke: CAUTION,
      'stroke-width': 1.4,
      'stroke-linecap': 'round',
    }),
  );
  let y = ty + TYPE.footer - 1;
  for (const line of lines) {
    parts.push(text(indent, y, line, { 'font-size': TYPE.footer, fill: CAUTION }));
    y += TYPE.footer + 4;
  }
  return {
    markup: el('g', { 'data-role': 'caution' }, parts.join('')),
    height: y - top + 8,
  };
}
