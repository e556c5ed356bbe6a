// Entry point of a tuning worker thread (bundled as dist/tune-worker.js): re-creates the scheme from its source
// text on `setup`, then answers each `eval` with the metric curve of one setting (src/tune/evaluate.ts).
// Must not import vscode or the DOM.

import { parentPort } from 'node:worker_threads';
import { parseAndCheck } from '../notation/index';
import type { CheckedScheme } from '../notation/scheme';
import { backendByName, setDefaultBackend } from '../engine/wasm/select';
import { evaluateSetting, evaluateSettingWithGradient, type EvaluationTask } from './evaluate';
import type { FromTuneWorker, ToTuneWorker } from './protocol';

let current: { scheme: CheckedScheme; task: EvaluationTask } | { error: string } | null = null;

function setup(msg: ToTuneWorker.Setup): void {
  // This thread runs nothing else, so the named backend becomes its default.
  setDefaultBackend(msg.backend && msg.backend !== 'auto' ? backendByName(msg.backend) : null);
  const checked = parseAndCheck(msg.source);
  if (!checked.scheme) {
    const first = checked.diagnostics.find((d) => d.severity === 'error');
    current = { error: first ? `${first.range.start.line}:${first.range.start.column}: ${first.message}` : 'the scheme has errors' };
    return;
  }
  current = { scheme: checked.scheme, task: { image: msg.image, ...(msg.fieldImages ? { fieldImages: msg.fieldImages } : {}), reference: msg.reference, steps: msg.steps, metric: msg.metric, dtype: msg.dtype } };
}

function evaluate(msg: ToTuneWorker.Eval): FromTuneWorker.Type {
  try {
    if (!current) throw new Error('tuning worker: eval before setup');
    if ('error' in current) throw new Error(current.error);
    const c = msg.gradient
      ? evaluateSettingWithGradient(current.scheme, current.task, msg.setting, msg.gradient)
      : evaluateSetting(current.scheme, current.task, msg.setting);
    return { type: 'result', id: msg.id, values: c.values, bestStep: c.bestStep, best: c.best, status: c.status, ...(c.gradient ? { gradient: c.gradient } : {}) };
  } catch (err) {
    return { type: 'error', id: msg.id, message: err instanceof Error ? err.message : String(err) };
  }
}

parentPort?.on('message', (msg: ToTuneWorker.Type) => {
  if (msg.type === 'setup') setup(msg);
  else if (msg.type === 'eval') {
    const reply = evaluate(msg);
    parentPort?.postMessage(reply, reply.type === 'result' ? [reply.values.buffer as ArrayBuffer] : []);
  }
});
