/**
 * A small, strict XML well-formedness checker and tree builder for testing our SVG output
 * (no dependency). It checks: one root element; balanced, properly nested tags; attribute
 * values quoted; no duplicate attributes; no raw `<` or stray `&` in text or attribute values;
 * only the five predefined entities or numeric character references; no characters XML 1.0
 * forbids. Comments, the XML declaration and CDATA are accepted. It throws an Error naming
 * the offset and the problem.
 */

export interface XmlElement {
  readonly name: string;
  readonly attrs: Record<string, string>;
  readonly children: XmlElement[];
  /** Decoded text directly inside this element (concatenated). */
  text: string;
}

const NAME = /^[A-Za-z_:][-A-Za-z0-9_:.]*/;
const ENTITIES: Record<string, string> = { amp: '&', lt: '<', gt: '>', quot: '"', apos: "'" };
// eslint-disable-next-line no-control-regex
const FORBIDDEN = /[\u0000-\u0008\u000B\u000C\u000E-\u001F\uFFFE\uFFFF]/;

function decode(raw: string, at: number): string {
  if (raw.includes('<')) throw new Error(`XML: raw '<' in text or attribute near offset ${at}`);
  if (FORBIDDEN.test(raw)) throw new Error(`XML: forbidden control character near offset ${at}`);
  return raw.replace(/&([^;]*);?/g, (m, body: string) => {
    if (!m.endsWith(';')) throw new Error(`XML: unterminated entity '${m}' near offset ${at}`);
    if (body in ENTITIES) return ENTITIES[body];
    const num = /^#(x[0-9A-Fa-f]+|[0-9]+)$/.exec(body);
    if (num) {
      const code = num[1][0] === 'x' ? parseInt(num[1].slice(1), 16) : parseInt(num[1], 10);
      return String.fromCodePoint(code);
    }
    throw new Error(`XML: unknown entity '&${body};' near offset ${at}`);
  });
}

export function parseXml(src: string): XmlElement {
  let i = 0;
  const stack: XmlElement[] = [];
  let root: XmlElement | null = null;
  const skipSpace = (): void => {
    while (i < src.length && /\s/.test(src[i])) i++;
  };
  while (i < src.length) {
    if (src.startsWith('<?', i)) {
      const end = src.indexOf('?>', i);
      if (end < 0) throw new Error(`XML: unterminated processing instruction at ${i}`);
      i = end + 2;
    } else if (src.startsWith('<!--', i)) {
      const end = src.indexOf('-->', i);
      if (end < 0) throw new Error(`XML: unterminated comment at ${i}`);
      i = end + 3;
    } else if (src.startsWith('<![CDATA[', i)) {
      const end = src.indexOf(']]>', i);
      if (end < 0 || stack.length === 0) throw new Error(`XML: bad CDATA at ${i}`);
      stack[stack.length - 1].text += src.slice(i + 9, end);
      i = end + 3;
    } else if (src.startsWith('</', i)) {
      i += 2;
      const m = NAME.exec(src.slice(i));
      if (!m) throw new Error(`XML: bad closing tag at ${i}`);
      i += m[0].length;
      skipSpace();
      if (src[i] !== '>') throw new Error(`XML: expected '>' at ${i}`);
      i++;
      const open = stack.pop();
      if (!open || open.name !== m[0]) {
        throw new Error(`XML: closing </${m[0]}> does not match <${open?.name ?? '(none)'}> at ${i}`);
      }
    } else if (src[i] === '<') {
      i++;
      const m = NAME.exec(src.slice(i));
      if (!m) throw new Error(`XML: bad tag name at ${i}`);
      i += m[0].length;
      const node: XmlElement = { name: m[0], attrs: {}, children: [], text: '' };
      const parent = stack.length > 0 ? stack[stack.length - 1] : null;
      if (parent) parent.children.push(node);
      else if (root === null) root = node;
      else throw new Error(`XML: more than one root element (<${node.name}> at ${i})`);
      for (;;) {
        const before = i;
        skipSpace();
        if (src.startsWith('/>', i)) {
          i += 2;
          break;
        }
        if (src[i] === '>') {
          i++;
          stack.push(node);
          break;
        }
        if (i === before) throw new Error(`XML: expected whitespace before attribute at ${i}`);
        const a = NAME.exec(src.slice(i));
        if (!a) throw new Error(`XML: bad attribute name at ${i}`);
        i += a[0].length;
        skipSpace();
        if (src[i] !== '=') throw new Error(`XML: attribute '${a[0]}' without '=' at ${i}`);
        i++;
        skipSpace();
        const q = src[i];
        if (q !== '"' && q !== "'") throw new Error(`XML: attribute '${a[0]}' value not quoted at ${i}`);
        const end = src.indexOf(q, i + 1);
        if (end < 0) throw new Error(`XML: unterminated attribute '${a[0]}' at ${i}`);
        if (a[0] in node.attrs) throw new Error(`XML: duplicate attribute '${a[0]}' at ${i}`);
        node.attrs[a[0]] = decode(src.slice(i + 1, end), i);
        i = end + 1;
      }
    } else {
      const next = src.indexOf('<', i);
      const end = next < 0 ? src.length : next;
      const raw = src.slice(i, end);
      if (stack.length === 0) {
        if (raw.trim() !== '') throw new Error(`XML: text outside the root element at ${i}`);
      } else {
        stack[stack.length - 1].text += decode(raw, i);
      }
      i = end;
    }
  }
  if (stack.length > 0) throw new Error(`XML: unclosed <${stack[stack.length - 1].name}>`);
  if (root === null) throw new Error('XML: no root element');
  return root;
}

/** Every element in document order. */
export function allElements(root: XmlElement): XmlElement[] {
  const out: XmlElement[] = [];
  const walk = (e: XmlElement): void => {
    out.push(e);
    e.children.forEach(walk);
  };
  walk(root);
  return out;
}

/** Elements matching a name and/or attribute values. */
export function findAll(root: XmlElement, name: string | null, attrs: Record<string, string> = {}): XmlElement[] {
  return allElements(root).filter(
    (e) => (name === null || e.name === name) && Object.entries(attrs).every(([k, v]) => e.attrs[k] === v),
  );
}

/** All text inside an element, descendants included. */
export function textContent(e: XmlElement): string {
  return e.text + e.children.map(textContent).join('');
}

/** Points of an SVG path made of M/L commands (absolute), as [x, y] pairs. */
export function pathPoints(d: string): [number, number][] {
  const out: [number, number][] = [];
  const re = /([ML])\s*(-?[\d.]+)[ ,](-?[\d.]+)/g;
  let m: RegExpExecArray | null;
  while ((m = re.exec(d)) !== null) out.push([Number(m[2]), Number(m[3])]);
  return out;
}
