/**
 * A case's text read into a plain value: YAML (or JSON for `.json` files), with one-line errors
 * that give the line; a JSON key given twice is refused as YAML refuses it, and keys JavaScript
 * gives a meaning of its own (`__proto__`) are refused wherever a case comes from.
 */
import { LineCounter, parseDocument } from 'yaml';
import { CaseError } from './errors.js';
import { pathText, showValue } from './case-messages.js';

/** Parse YAML (or JSON for `.json` files) into a plain value; errors are one line with the line number. */
export function parseCaseText(text: string, label: string, json = false): unknown {
  if (text.includes('\u0000')) throw new CaseError(label, '', 'the file holds binary data, not a YAML or JSON case');
  if (json) {
    let value: unknown;
    try {
      value = JSON.parse(text);
    } catch (e) {
      throw new CaseError(label, '', `not valid JSON: ${(e as Error).message}`);
    }
    // JSON.parse keeps the last of two equal keys without a word; YAML refuses them (uniqueKeys)
    const twice = duplicateJsonKey(text);
    if (twice) throw new CaseError(label, pathText(twice.path), `the key ${showValue(twice.key)} is given twice (line ${twice.line}); give each key once`);
    return value;
  }
  const lineCounter = new LineCounter();
  const doc = parseDocument(text, { prettyErrors: false, uniqueKeys: true, lineCounter });
  if (doc.errors.length > 0) {
    const err = doc.errors[0];
    const line = err.pos ? lineCounter.linePos(err.pos[0]).line : undefined;
    const first = err.message.split('\n')[0].replace(/ at line \d+, column \d+:?$/, '');
    throw new CaseError(label, '', `not valid YAML${line ? ` (line ${line})` : ''}: ${first}`);
  }
  try {
    return doc.toJS({ maxAliasCount: 100 });
  } catch (e) {
    throw new CaseError(label, '', `not valid YAML: ${(e as Error).message}`);
  }
}

/**
 * The first key given twice in one object of a JSON text that JSON.parse accepted, with the path
 * of its object and its line. A plain scan: strings, brackets, colons and commas are all it needs.
 */
export function duplicateJsonKey(text: string): { key: string; path: (string | number)[]; line: number } | undefined {
  type Frame = { keys?: Set<string>; expectKey: boolean; index: number; key?: string };
  const stack: Frame[] = [];
  const path = (): (string | number)[] => stack.slice(0, -1).map((f) => (f.keys ? (f.key as string) : f.index));
  for (let i = 0; i < text.length; i++) {
    const c = text[i];
    if (c === '{' || c === '[') {
      stack.push(c === '{' ? { keys: new Set(), expectKey: true, index: 0 } : { expectKey: false, index: 0 });
    } else if (c === '}' || c === ']') {
      stack.pop();
    } else if (c === ',') {
      const top = stack[stack.length - 1];
      if (top?.keys) top.expectKey = true;
      else if (top) top.index++;
    } else if (c === '"') {
      const start = i;
      for (i++; text[i] !== '"'; i++) if (text[i] === '\\') i++;
      const top = stack[stack.length - 1];
      if (top?.keys && top.expectKey) {
        const key = JSON.parse(text.slice(start, i + 1)) as string;
        top.expectKey = false;
        if (top.keys.has(key)) {
          top.key = key;
          const line = text.slice(0, start).split('\n').length;
          return { key, path: path(), line };
        }
        top.keys.add(key);
        top.key = key;
      }
    }
  }
  return undefined;
}

/**
 * Keys that JavaScript gives a meaning of their own (`__proto__` names an object's prototype):
 * refused anywhere in a case, whatever it was read from (YAML, JSON, a run's stored case).
 */
export function refuseOddKeys(raw: unknown, label: string): void {
  const stack: { v: unknown; path: (string | number)[] }[] = [{ v: raw, path: [] }];
  // YAML anchors and aliases share one object between places (and can make a cycle): each object
  // is looked at once, or a few nested aliases would mean exponentially many visits
  const seen = new Set<object>();
  while (stack.length) {
    const { v, path } = stack.pop()!;
    if (v === null || typeof v !== 'object' || ArrayBuffer.isView(v) || v instanceof Date) continue;
    if (seen.has(v)) continue;
    seen.add(v);
    if (Array.isArray(v)) {
      v.forEach((x, i) => stack.push({ v: x, path: [...path, i] }));
      continue;
    }
    for (const key of Object.keys(v)) {
      if (key === '__proto__') throw new CaseError(label, pathText(path), `the key '__proto__' is not accepted (JavaScript reads it as the prototype of the map; give another name)`);
      stack.push({ v: (v as Record<string, unknown>)[key], path: [...path, key] });
    }
  }
}
