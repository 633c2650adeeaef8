/**
 * Leaving at once (a second Ctrl-C or SIGTERM): what must still happen before process.exit so
 * that no file claims a writer that is gone — each run or study this process writes marks itself
 * `stopped` (it resumes from its last checkpoint) and releases its folder's lock. Writers register
 * while they write; the command line calls `leaveAtOnce` just before it exits.
 */
const hooks = new Set<(reason: string) => void>();

/** Register what leaving at once must do for a folder this process writes; returns the unregister function. */
export function onLeaveAtOnce(hook: (reason: string) => void): () => void {
  hooks.add(hook);
  return () => hooks.delete(hook);
}

/** Run every registered hook (each at most once; errors are swallowed: the process is on its way out). */
export function leaveAtOnce(reason: string): void {
  for (const h of [...hooks]) {
    hooks.delete(h);
    try {
      h(reason);
    } catch {
      /* nothing more can be done on the way out */
    }
  }
}
