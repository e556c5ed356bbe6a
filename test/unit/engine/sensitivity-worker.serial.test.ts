// Sensitivity mode through the engine worker thread (the live run's path): the frames carry ∂u/∂name beside u, equal
// to an in-process sensitivity run, and the result names the backend that ran (js-tangents, whatever was asked).
import { afterAll, describe, expect, it } from 'vitest';
import { createRun } from '../../../src/engine/run';
import { sensitivityKey } from '../../../src/engine/sensitivity';
import { EngineWorker } from '../../../src/engine/worker/workerClient';
import { expectClose, randomImage, schemeOf } from './util';

const TEXT = `grid 2d\nparam K = 0.05 in [0.001, 1]\nparam sigma = 1 in [0, 3]\nstep dt = 0.2\nsteps 12\nfield u = image\n` +
  `diffusivity g(s) = 1 / (1 + (s / K)^2)\nlet w = blur(u, sigma)\nu' = u + dt * sum n in N4: g(w[n] - w) * (u[n] - u)\n`;

const worker = new EngineWorker();
afterAll(() => worker.terminate());

describe('engine worker in sensitivity mode', () => {
  it('posts derivative snapshots equal to the in-process run, on the JavaScript dual kernels', async () => {
    const img = randomImage(30, 24, 5);
    const scheme = schemeOf(TEXT);
    const local = createRun(scheme, { image: img, sensitivity: ['sigma', 'dt'] });
    local.runSync();
    const last: Record<string, Float32Array | Float64Array> = {};
    const out = await worker.start({ scheme }, { image: img, every: 6, sensitivity: ['sigma', 'dt'], backend: 'wasm' }, {
      onFrame: (_s, fields) => {
        for (const [k, v] of Object.entries(fields)) last[k] = v.data;
      },
    }).done;
    expect(out.result.backend).toBe('js-tangents');
    expect(Object.keys(last).sort()).toEqual(['u', sensitivityKey('u', 'dt'), sensitivityKey('u', 'sigma')].sort());
    expectClose(last.u, local.fieldData(0), 0, 'values');
    expectClose(last[sensitivityKey('u', 'sigma')], Float32Array.from(local.sensitivityData(0, 'sigma')), 0, 'd/dsigma');
    expectClose(last[sensitivityKey('u', 'dt')], Float32Array.from(local.sensitivityData(0, 'dt')), 0, 'd/ddt');
  });
});
