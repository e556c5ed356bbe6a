// The analysis client's scheduling with an in-process analysis (no worker thread): latest text wins per document,
// superseded requests resolve 'stale', other documents are not disturbed.

import { describe, expect, it } from 'vitest';
import { AnalysisClient } from '../../../src/extension/analysisClient';
import { analyseText } from '../../../src/extension/analysisWorker';
import { HEAT } from './helpers';

describe('AnalysisClient (in-process)', () => {
  it('analyses, and marks superseded texts of the same document stale', async () => {
    const client = new AnalysisClient({ bundle: null, inProcess: async () => analyseText });
    const first = client.analyse('a', HEAT('0.1'));
    const second = client.analyse('a', HEAT('0.3'));
    const other = client.analyse('b', HEAT('0.2'));
    const [r1, r2, r3] = await Promise.all([first, second, other]);
    expect(r1).toBe('stale');
    expect(r2 !== 'stale' && r2.report?.stable).toBe(false);
    expect(r2 !== 'stale' && r2.diagnostics.map((d) => d.code)).toEqual(['step-over-limit']);
    expect(r3 !== 'stale' && r3.report?.dt).toBe(0.2);
    expect(r3 !== 'stale' && r3.thread).toBe('host');
    client.dispose();
  });

  it('reports no analysis for a text with errors, and never throws', async () => {
    const client = new AnalysisClient({ bundle: null, inProcess: async () => analyseText });
    const r = await client.analyse('a', 'grid 2d\nstep dt = 0.1\nu\' = nope');
    expect(r !== 'stale' && r.report).toBeNull();
    client.forget('a');
    client.dispose();
  });
});
