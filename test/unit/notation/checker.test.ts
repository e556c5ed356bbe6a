// Checker tests as data: each invalid input gives exactly these codes at exactly these ranges
// (`line:col-line:col`, 1-based, end exclusive). Every checker rule has at least one case.

import { describe, expect, it } from 'vitest';
import { parseAndCheck } from '../../../src/notation';
import { CODES } from '../../../src/notation/diagnostics';
import { CASES, PRE } from './cases';
import { printRange } from './printAst';

function diags(src: string, severity?: string): string[] {
  return parseAndCheck(src)
    .diagnostics.filter((d) => !severity || d.severity === severity)
    .map((d) => `${d.code} ${printRange(d.range)}`);
}


describe('checker: codes and exact ranges', () => {
  for (const [name, src, want] of CASES) {
    it(name, () => expect(diags(src)).toEqual(want));
  }

  it('covers every code of the catalogue', () => {
    const seen = new Set(CASES.flatMap(([, , want]) => want.map((w) => w.split(' ')[0])));
    const missing = Object.keys(CODES).filter((c) => !seen.has(c));
    expect(missing, 'codes without a test case').toEqual([]);
  });
});

describe('checker: meaning', () => {
  it('suggests the close name and carries it for the quick fix', () => {
    const d = parseAndCheck(PRE + "param sigma = 1\nu' = u * sigmaa").diagnostics.find((x) => x.code === 'unknown-name')!;
    expect(d.message).toContain('did you mean `sigma`');
    expect(d.data).toEqual({ name: 'sigmaa', suggestion: 'sigma' });
  });

  it('orders updates by primed reads, whatever the source order', () => {
    const r = parseAndCheck("grid 2d\nstep dt = 0.1\nsteps 5\nfield u = 0\nfield v = 0\nu' = u + dt * v'\nv' = v + dt * (sum n in N4: u[n] - u)");
    expect(r.diagnostics).toEqual([]);
    expect(r.scheme!.updates.map((u) => u.field)).toEqual(['v', 'u']);
    expect(r.scheme!.updates[1].readsPrimed).toEqual(['v']);
  });

  it('orders lets by their reads', () => {
    const r = parseAndCheck(PRE + "let b = a * 2\nlet a = u + 1\nu' = b");
    expect(r.diagnostics).toEqual([]);
    expect(r.scheme!.lets.map((l) => l.name)).toEqual(['a', 'b']);
  });

  it('resolves boundaries per field with the default for the rest', () => {
    const r = parseAndCheck("grid 2d\nboundary fixed 0.25\nboundary v periodic\nstep dt = 0.1\nsteps 5\nfield u = image\nfield v = 0\nu' = u + v\nv' = v");
    expect(r.diagnostics).toEqual([]);
    expect(r.scheme!.fields.map((f) => [f.name, f.boundary])).toEqual([
      ['u', { kind: 'fixed', value: 0.25 }],
      ['v', { kind: 'periodic' }],
    ]);
  });

  it('turns `until t = T` into round(T / dt) steps', () => {
    const r = parseAndCheck("grid 2d\nstep dt = 0.2\nuntil t = 12\nfield u = image\nu' = u");
    expect(r.scheme!.steps).toBe(60);
    expect(r.scheme!.untilTime).toBe(12);
  });

  it('marks fields without an update as constant', () => {
    const r = parseAndCheck(PRE + "field f = image\nu' = u + dt * (f - u)");
    expect(r.scheme!.fields.map((f) => [f.name, f.updated])).toEqual([['u', true], ['f', false]]);
  });

  it('gives no scheme while errors remain, and one once they are fixed', () => {
    expect(parseAndCheck(PRE + "u' = uu").scheme).toBeNull();
    expect(parseAndCheck(PRE + "u' = u").scheme).not.toBeNull();
  });
});
