// Campaign "soak": a long editing session through the extension's own change handler. The live run panel
// (src/extension/preview/previewPanel.ts) is built on a stand-in for the vscode module (fakeVscode.ts) with a real
// PreviewSession, a real engine worker and the real analysis thread; 2,000 random edits (typing, deleting, cut-off
// lines, changed numbers, pastes of whole valid schemes) are fired as onDidChangeTextDocument events while runs go on.
// Checked: no unhandled rejection; after the edits stop and the last run settles, the heap (after a full GC) is within
// 20% of its level before the edits; engine workers and OS threads return to the number before the edits (no leaked
// workers), and to zero workers once the panel is closed. Serial: real workers.

import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { runInNewContext } from 'node:vm';
import { setFlagsFromString } from 'node:v8';
import { afterAll, describe, expect, it } from 'vitest';
import * as vscode from 'vscode';
import { EngineWorker } from '../../src/engine/worker/workerClient';
import { AnalysisClient } from '../../src/extension/preview/analysisClient';
import { LiveRunPanel } from '../../src/extension/preview/previewPanel';
import { campaignSeed, report, rng, ROOT, scaled } from './campaign';
import { FakeDocument, FakePanel, Memento, documents, onDidChangeTextDocumentEmitter, settings } from './fakeVscode';

setFlagsFromString('--expose-gc');
const gc = runInNewContext('gc') as () => void;

/** Engine workers seen by the test (every one a session starts goes through start()). */
const engines = new Set<EngineWorker>();
const start = EngineWorker.prototype.start;
EngineWorker.prototype.start = function (this: EngineWorker, ...args: Parameters<EngineWorker['start']>) {
  engines.add(this);
  return start.apply(this, args);
};
const liveEngines = (): number => [...engines].filter((e) => (e as unknown as { worker: unknown; starting: unknown }).worker !== null || (e as unknown as { starting: unknown }).starting !== null).length;
const osThreads = (): number => readdirSync('/proc/self/task').length;

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

async function settle(gcRounds = 4): Promise<void> {
  for (let k = 0; k < gcRounds; k++) {
    await sleep(50);
    gc();
  }
}

describe('campaign soak', () => {
  const analysis = new AnalysisClient();
  afterAll(() => analysis.dispose());

  it('2,000 random edits through the change handler while the live run runs: no rejection, memory back, no leaked workers', async () => {
    const rejections: unknown[] = [];
    const onRejection = (e: unknown) => rejections.push(e);
    process.on('unhandledRejection', onRejection);
    const logs: string[] = [];
    try {
      const examples = ['heat-2d', 'edge-preserving', 'gray-scott', 'tv-flow', 'wave'].map((n) => readFileSync(join(ROOT, 'examples', `${n}.fluxel`), 'utf8'));
      const uri = vscode.Uri.parse('file:///w/soak.fluxel');
      const doc = new FakeDocument(uri, examples[0]);
      documents.set(uri.toString(), doc);
      settings.set('fluxel.liveRun.sceneSize', 96);
      settings.set('fluxel.liveRun.debounceMs', 30);
      const panel = new FakePanel();
      const live = new LiveRunPanel(panel as never, uri as never, {
        extensionUri: vscode.Uri.parse('file:///ext') as never, memory: new Memento() as never, analysis: () => analysis, log: (l) => logs.push(l),
      });
      const session = await live.sessionReady();
      expect(session).not.toBeNull();
      const ended = () => panel.counts.get('runEnded') ?? 0;
      const waitEnded = async (n: number, ms = 20_000) => { const t0 = Date.now(); while (ended() < n && Date.now() - t0 < ms) await sleep(20); };
      await waitEnded(1);

      // Warm-up edits, so the baseline includes compiled kernels, the analysis thread's state and scene caches.
      const r = rng(campaignSeed(20261206));
      const fire = (start: number, end: number, text: string) => onDidChangeTextDocumentEmitter.fire(doc.edit(start, end, text));
      const randomEdit = (): void => {
        const text = doc.getText();
        const at = Math.floor(r() * (text.length + 1));
        switch (Math.floor(r() * 8)) {
          case 0: fire(at, Math.min(text.length, at + 1), ''); break; // delete a character
          case 1: fire(at, at, "+-*/()[]{}:=', \nabcdeuKn0123456789#"[Math.floor(r() * 36)]); break; // type a character
          case 2: { const eol = text.indexOf('\n', at); fire(at, eol < 0 ? text.length : eol, ''); break; } // cut off the line
          case 3: { // change a number
            const nums = [...text.matchAll(/\d+(\.\d+)?/g)];
            const m = nums[Math.floor(r() * nums.length)];
            if (m) fire(m.index ?? 0, (m.index ?? 0) + m[0].length, String(Math.round(r() * 1000) / 1000)); else fire(at, at, '1');
            break;
          }
          case 4: fire(0, text.length, examples[Math.floor(r() * examples.length)].replace(/^steps \d+$/m, `steps ${1 + Math.floor(r() * 200)}`)); break; // paste a whole scheme
          case 5: fire(at, at, ' '); break;
          default: fire(at, at, ['sum n in N4: ', 'u[1, 0]', 'blur(u, 1)', 'if u > 0 then 1 else 0', 'param Q = 1\n', '\n'][Math.floor(r() * 6)]); break;
        }
      };
      for (let k = 0; k < 100; k++) { randomEdit(); if (k % 10 === 0) await sleep(30); }
      fire(0, doc.getText().length, examples[0]);
      await waitEnded(ended() + 1);
      await sleep(500);
      await settle();
      const baseHeap = process.memoryUsage().heapUsed;
      const baseEngines = liveEngines();
      const baseThreads = osThreads();

      const edits = scaled(2000);
      const t0 = performance.now();
      for (let k = 0; k < edits; k++) {
        randomEdit();
        // Bursts of typing with pauses: some edits fold into one run, some pauses let runs start and stream frames.
        const pause = r();
        await sleep(pause < 0.7 ? 0 : pause < 0.95 ? 5 : 60);
      }
      const editSeconds = (performance.now() - t0) / 1000;
      // The edits stop; the file is left valid so the last run completes, then memory is measured.
      const before = ended();
      fire(0, doc.getText().length, examples[0]);
      await waitEnded(before + 1);
      await sleep(1000);
      await settle(6);
      const heap = process.memoryUsage().heapUsed;
      const workersAfter = liveEngines();
      const threadsAfter = osThreads();
      const frames = panel.counts.get('frame') ?? 0;
      const runs = panel.counts.get('runStarted') ?? 0;

      live.dispose();
      await sleep(300);
      const workersClosed = liveEngines();
      const ratio = heap / baseHeap;
      // A session holds at most two engine workers: the one running and a warm spare, started while steps are long
      // (session.ts prepareSpare). Leaks would show as more after 2,000 edits, every one of which can replace a worker.
      const allowedWorkers = Math.max(2, baseEngines + 1);
      const failures = rejections.length + (ratio > 1.2 ? 1 : 0) + (workersAfter > allowedWorkers ? 1 : 0) + (threadsAfter > baseThreads + 2 ? 1 : 0) + (workersClosed > 0 ? 1 : 0);
      report('soak', edits, failures,
        `${runs} runs started, ${frames} frames posted in ${editSeconds.toFixed(1)} s of editing; heap ${(baseHeap / 1e6).toFixed(1)} MB before, ${(heap / 1e6).toFixed(1)} MB after (${((ratio - 1) * 100).toFixed(1)}%); ` +
        `engine workers ${baseEngines} before, ${workersAfter} after, ${workersClosed} after closing; OS threads ${baseThreads} before, ${threadsAfter} after; ${rejections.length} unhandled rejections; ${logs.length} log lines`);
      expect(rejections.map(String)).toEqual([]);
      expect(ratio).toBeLessThanOrEqual(1.2);
      expect(workersAfter).toBeLessThanOrEqual(allowedWorkers);
      expect(threadsAfter).toBeLessThanOrEqual(baseThreads + 2);
      expect(workersClosed).toBe(0);
      expect(runs).toBeGreaterThan(20);
    } finally {
      process.off('unhandledRejection', onRejection);
    }
  });
});
