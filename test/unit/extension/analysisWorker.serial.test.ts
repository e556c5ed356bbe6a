// The analysis worker for real: the extension bundle is built, loaded in a worker thread with a stand-in for
// 'vscode' (as in the editor), and answers with the same report as the in-process analysis.

import { build } from 'esbuild';
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { AnalysisClient } from '../../../src/extension/analysisClient';
import { analyseText } from '../../../src/extension/analysisWorker';
import { HEAT, ROOT, example } from './helpers';

let bundle = '';
let client: AnalysisClient;
const logs: string[] = [];

beforeAll(async () => {
  bundle = join(mkdtempSync(join(tmpdir(), 'fluxel-ext-')), 'extension.js');
  await build({ entryPoints: [join(ROOT, 'src/extension/extension.ts')], outfile: bundle, bundle: true, platform: 'node', format: 'cjs', target: 'node20', external: ['vscode'], logLevel: 'error' });
  client = new AnalysisClient({ bundle, inProcess: async () => analyseText, log: (l) => logs.push(l) });
});

afterAll(() => client.dispose());

describe('analysis worker thread', () => {
  it('answers from the worker with the in-process report', async () => {
    const r = await client.analyse('edge', example('edge-preserving.fluxel'));
    expect(r).not.toBe('stale');
    if (r === 'stale') return;
    expect(r.thread).toBe('worker');
    expect(logs).toEqual([]);
    const local = analyseText(example('edge-preserving.fluxel'));
    expect(r.report?.limit).toBe(local.report?.limit);
    expect(r.report?.method).toBe('positivity');
    expect(r.diagnostics.map((d) => d.code)).toEqual(local.diagnostics.map((d) => d.code));
  });

  it('keeps only the newest text of a document while it is busy', async () => {
    const pending = [client.analyse('heat', HEAT('0.1')), client.analyse('heat', HEAT('0.2')), client.analyse('heat', HEAT('0.3'))];
    const [a, b, c] = await Promise.all(pending);
    expect(b).toBe('stale');
    expect(a === 'stale' || a.report?.dt === 0.1).toBe(true);
    expect(c !== 'stale' && c.report?.dt).toBe(0.3);
    expect(c !== 'stale' && c.thread).toBe('worker');
  });
});
