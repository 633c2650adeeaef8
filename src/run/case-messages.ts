/**
 * Values and field paths in the words of a case's one-line errors: any value shown short and
 * safely (`showValue`), a field path (`continuation.step.min`, `stop-when[0]`), and the value a
 * path points to in the case as given. Used by every reader of cases (./case.ts and its siblings).
 */
/** `parent.key` for plain keys; just `parent` when the key itself is odd (empty, spaces…). */
export function keyPath(parent: string, key: string): string {
  return /^[\w:-]+$/.test(key) ? `${parent}.${key}` : parent;
}

/** For odd keys, the message names the key itself (it cannot appear in the field path). */
export function keyNote(key: string): string {
  return /^[\w:-]+$/.test(key) ? '' : `the name ${JSON.stringify(key)}: `;
}

/** A short, safe rendering of any value for messages (never throws). */
export function showValue(v: unknown): string {
  const text = render(v, 0);
  return text.length > 60 ? text.slice(0, 57) + '...' : text;
}

function render(v: unknown, depth: number): string {
  if (v === undefined) return depth === 0 ? 'nothing' : 'undefined';
  if (v === null) return 'null';
  if (typeof v === 'string') return depth === 0 && v.length > 60 ? `'${v.slice(0, 57)}...'` : `'${v}'`;
  if (typeof v === 'number') return Number.isNaN(v) ? 'nan' : v === Infinity ? 'inf' : v === -Infinity ? '-inf' : String(v);
  if (typeof v === 'bigint') return `${v}`;
  if (typeof v === 'boolean') return v ? 'true' : 'false';
  if (typeof v === 'function') return 'a function';
  if (typeof v === 'symbol') return 'a symbol';
  if (v instanceof Date) return Number.isNaN(v.getTime()) ? 'an invalid date' : v.toISOString();
  if (depth > 2) return Array.isArray(v) ? '[...]' : '{...}';
  if (Array.isArray(v) || ArrayBuffer.isView(v)) {
    const items = Array.from(v as ArrayLike<unknown>).slice(0, 8).map((x) => render(x, depth + 1));
    return `[${items.join(', ')}${(v as ArrayLike<unknown>).length > 8 ? ', ...' : ''}]`;
  }
  if (typeof v === 'object') {
    const entries = Object.keys(v).slice(0, 6).map((k) => `${k}: ${render((v as Record<string, unknown>)[k], depth + 1)}`);
    return `{${entries.join(', ')}${Object.keys(v).length > 6 ? ', ...' : ''}}`;
  }
  return 'a value';
}

/** `a.b[2].c`: a field path in the words of the messages. */
export function pathText(path: readonly PropertyKey[]): string {
  let s = '';
  for (const k of path) {
    if (typeof k === 'number') s += `[${k}]`;
    else s += s ? `.${String(k)}` : String(k);
  }
  return s;
}

/** The value at `path` inside `root` (undefined when the path leaves it). */
export function valueAt(root: unknown, path: readonly PropertyKey[]): unknown {
  let v: unknown = root;
  for (const k of path) {
    if (v === null || typeof v !== 'object') return undefined;
    v = (v as Record<PropertyKey, unknown>)[k as string];
  }
  return v;
}
