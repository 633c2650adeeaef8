/**
 * Small SVG building blocks: XML escaping, attribute formatting, text measurement estimates,
 * word wrapping and the document wrapper. Pure string work, no I/O.
 */

/** Characters not allowed in XML 1.0 (control characters other than tab, newline, return). */
// eslint-disable-next-line no-control-regex
const XML_INVALID = /[\u0000-\u0008\u000B\u000C\u000E-\u001F\uFFFE\uFFFF]/g;

/** Escape text for element content and attribute values; drops characters XML cannot carry. */
export function escapeXml(text: string): string {
  return String(text)
    .replace(XML_INVALID, '')
    .replace(/&/g, '&amp;')
    .replace(/</g, '&lt;')
    .replace(/>/g, '&gt;')
    .replace(/"/g, '&quot;')
    .replace(/'/g, '&apos;');
}

/** A coordinate with at most two decimals, no trailing zeros, no "-0". */
export function num(v: number): string {
  if (!Number.isFinite(v)) throw new Error(`internal plot error: non-finite coordinate ${v}`);
  const r = Math.round(v * 100) / 100;
  return String(r === 0 ? 0 : r);
}

export type AttrValue = string | number | undefined | null | false;

/** ` name="value"` pairs; undefined, null and false are left out; numbers pass through num(). */
export function attrs(a: Record<string, AttrValue>): string {
  let out = '';
  for (const [k, v] of Object.entries(a)) {
    if (v === undefined || v === null || v === false) continue;
    out += ` ${k}="${typeof v === 'number' ? num(v) : escapeXml(v)}"`;
  }
  return out;
}

/** An element; `content` is markup (already escaped). Self-closing when content is absent. */
export function el(name: string, a: Record<string, AttrValue> = {}, content?: string): string {
  return content === undefined ? `<${name}${attrs(a)}/>` : `<${name}${attrs(a)}>${content}</${name}>`;
}

/** A text element with escaped content. */
export function text(x: number, y: number, content: string, a: Record<string, AttrValue> = {}): string {
  return el('text', { x, y, ...a }, escapeXml(content));
}

/**
 * Estimated advance width of a string in a sans-serif face at `fontSize` px. Errs on the wide
 * side (the common fallback faces are wide), so boxes built from it rarely clip.
 */
export function textWidth(content: string, fontSize: number, bold = false): number {
  let w = 0;
  for (const ch of content) {
    if (' .,:;\'|!ijl'.includes(ch)) w += 0.32;
    else if ('ftrI()[]-'.includes(ch)) w += 0.42;
    else if ('mwMW'.includes(ch)) w += 0.92;
    else if (ch >= 'A' && ch <= 'Z') w += 0.7;
    else if (ch >= '0' && ch <= '9') w += 0.64;
    else w += 0.6;
  }
  return w * fontSize * (bold ? 1.07 : 1);
}

/** Greedy word wrap to lines no wider than maxWidth (a single long word stays whole). */
export function wrapText(content: string, fontSize: number, maxWidth: number): string[] {
  const words = content.split(/\s+/).filter((w) => w.length > 0);
  const lines: string[] = [];
  let line = '';
  for (const w of words) {
    const candidate = line === '' ? w : `${line} ${w}`;
    if (line !== '' && textWidth(candidate, fontSize) > maxWidth) {
      lines.push(line);
      line = w;
    } else {
      line = candidate;
    }
  }
  if (line !== '') lines.push(line);
  return lines;
}

/** Identifier-safe version of a string (for element ids). */
export function idSafe(s: string): string {
  return s.replace(/[^A-Za-z0-9_-]/g, '-');
}

/** The complete document. `body` and `defs` are markup. */
export function svgDocument(opts: {
  width: number;
  height: number;
  title: string;
  description?: string;
  kind: string;
  fontFamily: string;
  background: string;
  defs?: string;
  style?: string;
  body: string;
}): string {
  const head =
    `<?xml version="1.0" encoding="UTF-8"?>\n` +
    `<svg xmlns="http://www.w3.org/2000/svg"${attrs({
      width: opts.width,
      height: opts.height,
      viewBox: `0 0 ${num(opts.width)} ${num(opts.height)}`,
      role: 'img',
      'aria-label': opts.title,
      'font-family': opts.fontFamily,
      'data-plot': opts.kind,
    })}>\n`;
  const parts = [head, el('title', {}, escapeXml(opts.title)), '\n'];
  if (opts.description) parts.push(el('desc', {}, escapeXml(opts.description)), '\n');
  if (opts.style) parts.push(el('style', {}, escapeXml(opts.style)), '\n');
  if (opts.defs) parts.push(el('defs', {}, opts.defs), '\n');
  parts.push(el('rect', { width: '100%', height: '100%', fill: opts.background }), '\n');
  parts.push(opts.body, '\n</svg>\n');
  return parts.join('');
}
