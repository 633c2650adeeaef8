/**
 * Errors of the run layer that mean "bad input" (the command line turns them into exit code 2
 * and prints the one-line message; no stack trace).
 */

/** Bad input: a case file, a command-line value or an output folder that cannot be used. */
export class InputError extends Error {
  override name = 'InputError';
  constructor(message: string) {
    // one line, always: messages from deeper layers (parsers, user code) may hold newlines
    super(oneLine(message));
  }
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
    this.detail = oneLine(detail);
  }
}

/** Collapse whitespace runs containing newlines into single spaces and trim. */
export function oneLine(text: string): string {
  return text.replace(/\s*[\r\n]+\s*/g, ' ').trim();
}
