/**
 * Branch helpers: worker threads that trace the branches queued at branch points side by side
 * with the run's own thread (the engine's `BranchHelpers`, src/continuation/engine.ts), so that a
 * run uses more than one core where its work is independent.
 *
 * Each helper thread prepares the case again from its resolved document (problems hold functions
 * and cannot be sent), then traces the branches it is given with an engine of its own
 * (`Continuation.traceBranch`) and sends each whole trace back. The engine takes the traces over
 * in queue order, so the run's files are those of a run on one core, byte for byte (the engine's
 * header of BranchHelpers says why).
 *
 * The engine is synchronous: it waits for a trace by blocking on a shared counter that a helper
 * bumps after each message (Atomics.wait), and reads the message with receiveMessageOnPort. While
 * it waits it checks its stop request; a helper checks a shared stop flag before every
 * factorisation. A branch the helper has not begun when the engine needs it is taken back and
 * traced in the run's thread (a shared claim slot decides who traces it: the same digits either
 * way), so a helper still starting up never delays a run. Threads start when the first branch is
 * handed over (a run without branch points starts none) and end with `dispose()`.
 */
import { existsSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { MessageChannel, type MessagePort, Worker, receiveMessageOnPort } from 'node:worker_threads';
import type { BranchHelpers, BranchTask, BranchTrace } from '../continuation/engine.js';
import { type PreparedCase, caseDocument, ownCodeModel } from './case.js';
import { syncEvery } from './run-hooks.js';
import { defaultFactorMemoryLimit, estimateFactorMemory } from '../../discretisations/index.js';

/**
 * Below this many unknowns a run or a grid costs about what starting another thread or process
 * costs (loading the program and the WebAssembly solvers, preparing the case: a second or two of
 * CPU), so by default (no --cores) such work stays on one core.
 */
export const sideBySideUnknowns = 5000;

/** What a helper thread starts with (workerData). */
export interface HelperSetup {
  doc: Record<string, unknown>;
  label: string;
  file?: string;
  baseDir: string;
  loadCode?: string;
  syncEvery: number;
  port: MessagePort;
  /** Int32 counter bumped after every message the helper sends. */
  bell: SharedArrayBuffer;
  /** Int32 flag: 1 abandons the trace in progress. */
  stop: SharedArrayBuffer;
  /** Int32 claim of the branch handed over: 0 open, +id the helper traces it, −id taken back. */
  claim: SharedArrayBuffer;
}

/** Messages between the run's thread and a helper. */
export type HelperRequest = { id: number; task: BranchTask };
export type HelperReply = { id: number; trace: BranchTrace } | { id: number; failure: string; interrupted: boolean } | { id: number; skipped: true };

interface Helper {
  worker: Worker;
  port: MessagePort;
  bell: Int32Array;
  stop: Int32Array;
  claim: Int32Array;
  /** The branch it traces, if any. */
  busy?: number;
  dead?: string;
}

/** The compiled helper program (dist/ when running from the TypeScript sources, e.g. in tests). */
function helperScript(): string | undefined {
  const here = dirname(fileURLToPath(import.meta.url));
  const sibling = join(here, 'branch-helper-worker.js');
  if (existsSync(sibling)) return sibling;
  const built = resolve(here, '../../dist/src/run/branch-helper-worker.js');
  return existsSync(built) ? built : undefined;
}

export class BranchHelperThreads implements BranchHelpers {
  private readonly helpers: Helper[] = [];
  private readonly replies = new Map<number, HelperReply>();

  private constructor(
    private readonly prepared: PreparedCase,
    private readonly count: number,
    private readonly script: string,
    private readonly log: (level: 'info' | 'warning', message: string) => void,
  ) {
    const d = prepared.problem.describe();
    const factor = estimateFactorMemory(d.axes.map((a) => a.nodes), Math.max(1, d.fields.length), prepared.problem.extraUnknowns.length + 1).bytes;
    // the continuation's factors and, with stability, the eigen solver's: twice over
    this.outOfTurn = 2 * factor * (prepared.case.stability.eigenvalues > 0 ? 2 : 1) <= defaultFactorMemoryLimit;
  }

  /**
   * Helpers for a run on `cores` cores (cores − 1 threads beside the run's own); undefined when
   * there is nothing to share (one core, no branch switching) or the compiled program is missing.
   */
  static open(prepared: PreparedCase, cores: number, log: (level: 'info' | 'warning', message: string) => void): BranchHelperThreads | undefined {
    const s = prepared.settings;
    if (cores <= 1 || s.method !== 'arclength' || !s.locate.branchPoints || s.branchSwitching.depth < 1) return undefined;
    const script = helperScript();
    if (!script) {
      log('warning', 'tracing branches side by side needs the compiled program (npm run build); the branches are traced one after another');
      return undefined;
    }
    return new BranchHelperThreads(prepared, cores - 1, script, log);
  }

  readonly syncEvery = syncEvery;
  /**
   * While a helper holds the next branch, this thread traces a later one with a second engine —
   * only where a second set of factorisations fits the solver's address space with the first.
   */
  readonly outOfTurn: boolean;

  busy(id: number): boolean {
    const h = this.helpers.find((x) => x.busy === id);
    if (!h) return false;
    this.receiveInto(h);
    // begun by the helper and not yet back
    return h.busy === id && Atomics.load(h.claim, 0) === id && h.dead === undefined;
  }

  free(): number {
    for (const h of this.helpers) this.receiveInto(h);
    return this.count - this.helpers.filter((h) => h.busy !== undefined || h.dead !== undefined).length;
  }

  submit(id: number, task: BranchTask): void {
    const h = this.helpers.find((x) => x.busy === undefined && x.dead === undefined) ?? this.start();
    h.busy = id;
    Atomics.store(h.claim, 0, 0);
    h.port.postMessage({ id, task } satisfies HelperRequest);
  }

  take(id: number, interrupt?: () => void): BranchTrace | undefined {
    const h = this.helpers.find((x) => x.busy === id);
    if (h) {
      this.receiveInto(h);
      // not begun yet (the helper still starting, say): trace it here rather than wait
      if (!this.replies.has(id) && Atomics.compareExchange(h.claim, 0, 0, -id) === 0) return undefined;
      while (!this.replies.has(id)) {
        if (h.dead !== undefined) {
          this.log('warning', `branch ${id} is traced in the run's own thread: its helper thread ended (${h.dead})`);
          return undefined;
        }
        try {
          interrupt?.();
        } catch (e) {
          // the run stops: the helper abandons its branch (the run's checkpoint does not hold it)
          Atomics.store(h.stop, 0, 1);
          throw e;
        }
        const rung = Atomics.load(h.bell, 0);
        if (this.receiveInto(h)) continue;
        Atomics.wait(h.bell, 0, rung, 100);
      }
    }
    const reply = this.replies.get(id);
    this.replies.delete(id);
    if (!reply) return undefined;
    if ('trace' in reply) return reply.trace;
    if ('skipped' in reply) return undefined;
    if (reply.interrupted) interrupt?.();
    this.log('warning', `branch ${id} is traced in the run's own thread: its helper thread failed (${reply.failure})`);
    return undefined;
  }

  /** End every helper thread (a branch in progress is abandoned). */
  dispose(): void {
    for (const h of this.helpers) {
      Atomics.store(h.stop, 0, 1);
      h.port.close();
      void h.worker.terminate();
    }
    this.helpers.length = 0;
  }

  private start(): Helper {
    const { port1, port2 } = new MessageChannel();
    const bell = new SharedArrayBuffer(4);
    const stop = new SharedArrayBuffer(4);
    const claim = new SharedArrayBuffer(4);
    const p = this.prepared;
    const setup: HelperSetup = {
      doc: caseDocument(p.case),
      label: p.label,
      ...(p.file !== undefined ? { file: p.file } : {}),
      baseDir: p.baseDir,
      ...ownCodeModel(p.case),
      syncEvery,
      port: port2,
      bell,
      stop,
      claim,
    };
    // the thread runs a file: an --input-type flag of the process is not for it
    const worker = new Worker(this.script, { workerData: setup, transferList: [port2], execArgv: process.execArgv.filter((a) => !a.startsWith('--input-type')) });
    const h: Helper = { worker, port: port1, bell: new Int32Array(bell), stop: new Int32Array(stop), claim: new Int32Array(claim) };
    worker.on('error', (e) => {
      h.dead = e.message;
    });
    worker.on('exit', (code) => {
      h.dead ??= `exit code ${code}`;
    });
    worker.unref();
    this.helpers.push(h);
    return h;
  }

  /** Read the helper's waiting messages into `replies` (a skipped branch's is only noted); whether one came. */
  private receiveInto(h: Helper): boolean {
    let got = false;
    for (let m = receiveMessageOnPort(h.port); m; m = receiveMessageOnPort(h.port)) {
      const reply = m.message as HelperReply;
      if (!('skipped' in reply)) this.replies.set(reply.id, reply);
      if (h.busy === reply.id) h.busy = undefined;
      got = true;
    }
    return got;
  }
}
