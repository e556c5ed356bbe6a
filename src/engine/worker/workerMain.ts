// Entry point of the engine worker thread (bundled as dist/engine-worker.js): re-creates the run from plain data,
// steps it, and posts progress, frames, warnings and the result. Cancellation arrives through shared memory,
// so it is seen within one step even while this thread never returns to its event loop.
// Must not import vscode or the DOM.

import { parentPort } from 'node:worker_threads';
import { parseAndCheck } from '../../notation/index';
import { createRun } from '../run';
import type { FieldArray } from '../types';
import { backendByName } from '../wasm/select';
import type { FieldSnapshot, FromWorker, ToWorker } from './protocol';

function post(msg: FromWorker.Type, transfer: ArrayBuffer[] = []): void {
  parentPort?.postMessage(msg, transfer);
}

function start(msg: ToWorker.Start): void {
  const { runId } = msg;
  try {
    let scheme = msg.scheme ?? null;
    if (!scheme && msg.source !== undefined) {
      const checked = parseAndCheck(msg.source);
      scheme = checked.scheme;
      if (!scheme) {
        const first = checked.diagnostics.find(d => d.severity === 'error');
        throw new Error(first ? `${first.range.start.line}:${first.range.start.column}: ${first.message}` : 'the scheme has errors');
      }
    }
    if (!scheme) throw new Error('no scheme to run');
    const flag = new Int32Array(msg.cancel);
    const { backend, ...options } = msg.options;
    // `auto` (or no name) leaves the engine's default in place.
    const run = createRun(scheme, backend && backend !== 'auto' ? { ...options, backend: backendByName(backend) } : options);
    const every = msg.progressEveryMs ?? 50;
    let lastProgress = 0;
    const result = run.runSync({
      shouldCancel: () => Atomics.load(flag, 0) !== 0,
      onProgress: (step, total) => {
        const now = performance.now();
        if (now - lastProgress >= every || step === total) {
          lastProgress = now;
          post({ type: 'progress', runId, step, total });
        }
      },
      onWarning: warning => post({ type: 'warning', runId, warning }),
      onFrame: frame => {
        const fields: Record<string, FieldSnapshot> = {};
        const transfer: ArrayBuffer[] = [];
        for (const [name, view] of Object.entries(frame.fields)) {
          fields[name] = { width: view.shape[1], height: view.shape[0], data: view.data };
          transfer.push(view.data.buffer as ArrayBuffer);
        }
        post({ type: 'frame', runId, stats: frame.stats, fields }, transfer);
      },
    });
    const fields: Record<string, FieldSnapshot> = {};
    const transfer: ArrayBuffer[] = [];
    scheme.fields.forEach((f, k) => {
      const data: FieldArray = run.fieldData(k);
      fields[f.name] = { width: run.geometry.width, height: run.geometry.height, data };
      transfer.push(data.buffer as ArrayBuffer);
    });
    post({ type: 'done', runId, result, fields }, transfer);
  } catch (err) {
    post({ type: 'error', runId, message: err instanceof Error ? err.message : String(err) });
  }
}

parentPort?.on('message', (msg: ToWorker.Type) => {
  if (msg && msg.type === 'start') start(msg);
});
