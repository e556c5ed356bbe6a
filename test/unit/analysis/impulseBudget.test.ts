// Minimised case of the runaway campaign (test/hardening/runaway.serial.test.ts): `steps 1000000000` made the impulse
// response loop a billion times over its grid, which froze the live run's analysis thread (scenes, verdicts and
// weights queued behind it never came). The impulse response now refuses work beyond MAX_IMPULSE_WORK with a reason.

import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { impulseResponse, MAX_IMPULSE_WORK } from '../../../src/analysis/kernel';
import { parseAndCheck } from '../../../src/notation';
import type { CheckedScheme } from '../../../src/notation/scheme';

const heat = parseAndCheck(readFileSync(join(__dirname, '../../../examples/heat-2d.fluxel'), 'utf8')).scheme as CheckedScheme;

describe('impulse response work budget', () => {
  it('refuses a billion steps with the reason, and still computes the declared steps', () => {
    expect(() => impulseResponse(heat, 1e9, { maxRadius: 64 })).toThrow(/the impulse response of 1000000000 steps would take about 8\.3e\+13 operations, more than the 1e\+9 allowed/);
    const r = impulseResponse(heat, 40, { maxRadius: 64 });
    expect(r?.steps).toBe(40);
    // 5 stencil entries on a 129 × 129 grid: the budget covers more than a thousand steps.
    expect(MAX_IMPULSE_WORK / (5 * 129 * 129)).toBeGreaterThan(1000);
  });
});
