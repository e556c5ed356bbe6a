// The engine's runner tests once more with the JavaScript backend as the default (the files themselves run on the
// default, the SIMD backend), so every engine test passes on both backends. The reference checks without Python
// (monitors, diffusion against published results, every example) are included; blur's needs scipy and stays there.
import { afterAll, beforeAll, expect, it } from 'vitest';
import { createRun } from '../../../src/engine/run';
import { jsBackend } from '../../../src/engine/jsBackend';
import { setDefaultBackend } from '../../../src/engine/wasm/select';
import { schemeOf } from './util';
import './run.test';
import './monitorPolicy.test';
import './boundary.test';
import '../../reference/engine/monitors.test';
import '../../reference/engine/diffusion.test';
import '../../reference/engine/examples.test';

beforeAll(() => setDefaultBackend(jsBackend));
afterAll(() => setDefaultBackend(null));

it('the imported tests really run on the JavaScript backend here', () => {
  const run = createRun(schemeOf(`grid 2d\nstep dt = 0.1\nsteps 1\nfield u = 0\nu' = u + 1\n`), { width: 8, height: 8 });
  expect(run.compiled.backend).toBe('js');
});
