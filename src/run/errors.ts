/**
 * Errors of the run layer that mean "bad input" (the command line turns them into exit code 2
 * and prints the one-line message; no stack trace).
 */

/** Bad input: a case file, a command-line value or an output folder that cannot be used. */
export class InputError extends Error {
  override name = 'InputError';
  constructor(message: string) {
    // one line, always: messages from deeper layers (parsers, user code) may hold newlines
    super(shortened(printable(oneLine(message))));
  }
}

/** Longest message shown whole; a longer one (a huge value quoted somewhere) keeps its start and end. */
const longestMessage = 800;

function shortened(text: string): string {
  return text.length <= longestMessage ? text : `${text.slice(0, 500)} [... ${text.length - 750} characters ...] ${text.slice(-250)}`;
}

/**
 * A case file error: `file: field.path: what is wrong (accepted: ...)`.
 * `field` is the path inside the case (e.g. `continuation.bounds`), empty for the whole file.
 */
export class CaseError extends InputError {
  override name = 'CaseError';
  readonly file: string;
  readonly field: string;
  readonly detail: string;
  constructor(file: string, field: string, detail: string) {
    super(field ? `${file}: ${field}: ${detail}` : `${file}: ${detail}`);
    this.file = file;
    this.field = field;
    this.detail = printable(oneLine(detail));
  }
}

/** Collapse whitespace runs containing newlines into single spaces and trim. */
export function oneLine(text: string): string {
  return text.replace(/\s*[\r\n]+\s*/g, ' ').trim();
}

/**
 * Characters that a terminal acts on instead of showing: C0 controls (ESC starts escape
 * sequences that can retitle or clear the terminal, BEL rings, CR overwrites the line), DEL, C1
 * controls (0x9b is an 8-bit CSI) and the Unicode direction overrides and isolates that reorder
 * what is shown. Newline and tab are left alone (they only lay out text).
 */
const CONTROL = /[\u0000-\u0008\u000b-\u001f\u007f-\u009f\u061c\u200e\u200f\u202a-\u202e\u2066-\u2069]/g;

/**
 * Text safe to show on a terminal: every control character (see CONTROL) written as an escape
 * (`\x1b`, `\u202e`). Every message and every line the command prints goes through this, so
 * that a value from a case file, a run folder or a code model can never act on the terminal.
 */
export function printable(text: string): string {
  return text.replace(CONTROL, (c) => {
    const code = c.charCodeAt(0);
    return code < 0x100 ? `\\x${code.toString(16).padStart(2, '0')}` : `\\u${code.toString(16).padStart(4, '0')}`;
  });
}
