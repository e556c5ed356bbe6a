// Live-run latency: from the host receiving a document change to the posting of the first frame with step ≥ 1
// (contracts §5), for examples/edge-preserving.fluxel on a 256×256 survey scene at 50 steps with the debounce at 0,
// median over runs (target: under 150 ms); and the host event loop's longest block during those runs
// (perf_hooks.monitorEventLoopDelay; target: under 50 ms). Drives the vscode-free session with the real engine
// worker and analysis thread. Needs `npm run build` first (dist/engine-worker.js, dist/preview-analysis.js).
// Prints figures; asserts nothing.

import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { monitorEventLoopDelay, PerformanceObserver } from 'node:perf_hooks';
import { EngineWorker } from '../../src/engine/worker/workerClient';
import type { ToPreview } from '../../src/protocol/preview';
import { AnalysisClient } from '../../src/extension/preview/analysisClient';
import { PreviewSession } from '../../src/extension/preview/session';

const root = process.cwd();
const base = readFileSync(join(root, 'examples/edge-preserving.fluxel'), 'utf8').replace(/^steps \d+$/m, 'steps 50');

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.floor(s.length / 2)];
}

async function main(): Promise<void> {
  const engineScript = join(root, 'dist/engine-worker.js');
  const analysis = new AnalysisClient({ script: join(root, 'dist/preview-analysis.js') });
  let onFirst: ((ms: number) => void) | null = null;
  let onEnded: (() => void) | null = null;
  let t0 = 0;
  let frames = 0;
  let bytes = 0;
  const session = new PreviewSession({
    source: 'file:///bench/edge-preserving.fluxel',
    fileName: 'edge-preserving.fluxel',
    post: (m: ToPreview.Type) => {
      if (m.type === 'frame') {
        frames++;
        bytes += m.data.byteLength;
        if (m.step >= 1 && onFirst) {
          const f = onFirst;
          onFirst = null;
          f(performance.now() - t0);
        }
      }
      if (m.type === 'runEnded' && m.status === 'done' && onEnded) onEnded();
    },
    newEngine: () => new EngineWorker({ script: engineScript }),
    analysis,
    settings: () => ({ debounceMs: 0, maxPreviewSize: 512, sceneSize: 256 }),
    readImage: () => Promise.reject(new Error('no files in the bench')),
    recallInput: () => ({ kind: 'scene', scene: 'survey', noise: 0.1, seed: 7 }),
    rememberInput: () => undefined,
  });

  // One edit = one changed comment line, so the text differs every time (nothing is cached by text).
  const edit = (k: number) => `# edit ${k}\n${base}`;
  const once = (k: number) =>
    new Promise<{ first: number; total: number }>((resolve) => {
      let first = NaN;
      onFirst = (ms) => { first = ms; };
      onEnded = () => { onEnded = null; resolve({ first, total: performance.now() - t0 }); };
      t0 = performance.now();
      session.documentChanged(edit(k));
    });

  for (let k = 0; k < 5; k++) await once(k); // warm-up: worker start, kernel compile, JIT
  const gcPauses: number[] = [];
  const gcKinds = new Map<number, number>();
  const gcObserver = new PerformanceObserver((list) => {
    for (const e of list.getEntries()) {
      gcPauses.push(e.duration);
      const kind = ((e as unknown as { detail?: { kind?: number } }).detail)?.kind ?? 0;
      gcKinds.set(kind, Math.max(gcKinds.get(kind) ?? 0, e.duration));
    }
  });
  gcObserver.observe({ entryTypes: ['gc'] });
  const h = monitorEventLoopDelay({ resolution: 5 });
  const runStart = performance.now();
  h.enable();
  const firsts: number[] = [];
  const totals: number[] = [];
  frames = 0;
  bytes = 0;
  const runs = 21;
  for (let k = 0; k < runs; k++) {
    const r = await once(100 + k);
    firsts.push(r.first);
    totals.push(r.total);
  }
  h.disable();
  gcObserver.disconnect();
  const runSpan = performance.now() - runStart;

  // Baseline in the same process: the idle event loop over the same span, to tell the machine's own scheduling
  // noise (other processes on the 2 cores) from blocks caused by the host code.
  const idle = monitorEventLoopDelay({ resolution: 5 });
  idle.enable();
  await new Promise((r) => setTimeout(r, runSpan));
  idle.disable();

  // Rapid typing: 20 edits 10 ms apart, each cancelling the run before it; time from the last edit to its first frame.
  const typing: number[] = [];
  for (let round = 0; round < 5; round++) {
    for (let k = 0; k < 19; k++) {
      session.documentChanged(edit(1000 + round * 100 + k));
      await new Promise((r) => setTimeout(r, 10));
    }
    const r = await once(1000 + round * 100 + 19);
    typing.push(r.first);
  }

  console.log(`edit → first frame (step ≥ 1), 256×256, 50 steps, debounce 0: median ${median(firsts).toFixed(1)} ms over ${runs} runs (min ${Math.min(...firsts).toFixed(1)}, max ${Math.max(...firsts).toFixed(1)}); target < 150 ms`);
  console.log(`edit → last frame of the run: median ${median(totals).toFixed(1)} ms; ratio first/last ${(median(firsts) / median(totals)).toFixed(2)}`);
  console.log(`after 20 edits 10 ms apart (each cancels the previous run): last edit → first frame median ${median(typing).toFixed(1)} ms`);
  const ms = (ns: number) => (ns / 1e6).toFixed(1);
  console.log(`host event loop during the runs: longest block ${ms(h.max)} ms, p99 ${ms(h.percentile(99))} ms, mean ${(h.mean / 1e6).toFixed(2)} ms; target < 50 ms`);
  console.log(`idle event loop, same process, same span (machine noise): longest ${ms(idle.max)} ms, p99 ${ms(idle.percentile(99))} ms; ratio of longest blocks ${(h.max / Math.max(1, idle.max)).toFixed(2)}`);
  const kindName: Record<number, string> = { 1: 'minor', 2: 'major', 4: 'incremental', 8: 'weak callbacks' };
  const byKind = [...gcKinds].map(([k, v]) => `${kindName[k] ?? k} ${v.toFixed(1)} ms`).join(', ');
  console.log(`garbage-collection pauses during the runs: ${gcPauses.length}, longest ${Math.max(0, ...gcPauses).toFixed(1)} ms (longest by kind: ${byKind})`);
  console.log(`load average at the end: ${(await import('node:os')).loadavg().map((v) => v.toFixed(1)).join(' ')} on ${(await import('node:os')).cpus().length} cores`);
  console.log(`frames posted: ${frames} (${(bytes / 1e6).toFixed(1)} MB) over ${runs} runs`);
  console.log('debounce in the extension: setting fluxel.liveRun.debounceMs, default 150 ms (not included above)');
  session.dispose();
  await analysis.dispose();
}

main().then(() => process.exit(0), (err) => {
  console.error(err);
  process.exit(1);
});
