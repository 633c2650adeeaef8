/**
 * A branch helper thread (see branch-helpers.ts): prepares the case from its resolved document,
 * then traces each branch it is sent with one engine of its own and sends the trace back,
 * bumping the shared counter the run's thread waits on.
 */
import { workerData } from 'node:worker_threads';
import { Continuation } from '../continuation/engine.js';
import { WorkInterrupted } from '../linalg/lu.js';
import { prepareCaseObject } from './case.js';
import type { HelperReply, HelperRequest, HelperSetup } from './branch-helpers.js';

const setup = workerData as HelperSetup;
const bell = new Int32Array(setup.bell);
const stop = new Int32Array(setup.stop);
const claim = new Int32Array(setup.claim);

function send(reply: HelperReply): void {
  setup.port.postMessage(reply);
  Atomics.add(bell, 0, 1);
  Atomics.notify(bell, 0);
}

const engine = (async () => {
  const prepared = await prepareCaseObject(setup.doc, {
    label: setup.label,
    baseDir: setup.baseDir,
    ...(setup.file !== undefined ? { file: setup.file } : {}),
    ...(setup.loadCode !== undefined ? { loadCode: setup.loadCode } : {}),
  });
  return new Continuation(prepared.problem, prepared.params, prepared.settings, {
    interrupt: () => {
      if (Atomics.load(stop, 0) !== 0) throw new WorkInterrupted('stop requested');
    },
  });
})();

setup.port.on('message', (m: HelperRequest) => {
  void engine.then(
    (e) => {
      // taken back by the run's thread meanwhile: it traces the branch itself
      if (Atomics.compareExchange(claim, 0, 0, m.id) !== 0) return send({ id: m.id, skipped: true });
      try {
        send({ id: m.id, trace: e.traceBranch(m.task, setup.syncEvery) });
      } catch (err) {
        send({ id: m.id, failure: err instanceof Error ? err.message : String(err), interrupted: err instanceof WorkInterrupted });
      }
    },
    (err: unknown) => send({ id: m.id, failure: err instanceof Error ? err.message : String(err), interrupted: false }),
  );
});
