// Quick-fix planning with plain objects: each fix's title and resulting text, and that fixed texts check clean.

import { describe, expect, it } from 'vitest';
import { fixesFor, stepText } from '../../../src/extension/fixes';
import { HEAT, analyse, applyEdits } from './helpers';

const opts = { safetyFraction: 0.9 };

function fixesOf(text: string, code: string) {
  const a = analyse(text);
  const d = a.diagnostics.find((x) => x.code === code);
  expect(d, `a ${code} diagnostic in:\n${text}\n(got ${a.diagnostics.map((x) => x.code).join(', ')})`).toBeDefined();
  return fixesFor(d!, a.checked.program, text, opts);
}

describe('stepText', () => {
  it.each([
    [0.25, '0.25'],
    [1.2499999999999993, '1.25'],
    [1 / 6, '0.1666'],
    [0.7071067811862122, '0.7071'],
    [0.0225, '0.0225'],
    [123.456789, '123.4'],
  ])('writes %d as %s, never above the limit', (limit, text) => {
    expect(stepText(limit)).toBe(text);
    expect(Number(text)).toBeLessThanOrEqual(limit * (1 + 1e-9));
  });
});

describe('dt fixes', () => {
  it('offers the limit and the safety fraction for a dt over the limit; the fraction is preferred', () => {
    const text = HEAT('0.3');
    const fixes = fixesOf(text, 'step-over-limit');
    expect(fixes.map((f) => [f.title, f.preferred])).toEqual([
      ['Set dt to the stable limit (0.25)', false],
      ['Set dt to 90% of the limit (0.225)', true],
    ]);
    const fixed = applyEdits(text, fixes[0].edits);
    expect(fixed.split('\n')[3]).toBe('step dt = 0.25 in [0.02, 0.3]');
    const after = analyse(fixed);
    expect(after.report?.stable).toBe(true);
    expect(after.diagnostics.filter((d) => d.severity !== 'info')).toEqual([]);
    expect(analyse(applyEdits(text, fixes[1].edits)).report?.dt).toBe(0.225);
  });

  it('widens the slider range when the new dt falls below its low end', () => {
    const text = HEAT('0.3').replace('in [0.02, 0.3]', 'in [0.28, 0.3]');
    const fixes = fixesOf(text, 'step-over-limit');
    expect(applyEdits(text, fixes[0].edits).split('\n')[3]).toBe('step dt = 0.25 in [0.25, 0.3]');
  });

  it('offers only the safety fraction for a dt within the limit', () => {
    const fixes = fixesOf(HEAT('0.25'), 'step-limit');
    expect(fixes.map((f) => f.title)).toEqual(['Set dt to 90% of the limit (0.225)']);
  });

  it('uses the configured fraction', () => {
    const a = analyse(HEAT('0.3'));
    const d = a.diagnostics.find((x) => x.code === 'step-over-limit')!;
    expect(fixesFor(d, a.checked.program, HEAT('0.3'), { safetyFraction: 0.5 })[1].title).toBe('Set dt to 50% of the limit (0.125)');
  });
});

describe('name fixes', () => {
  const PRE = 'grid 2d\nstep dt = 0.1\nsteps 5\nfield u = image\n';

  it('replaces an unknown name by the suggestion (preferred) or declares it as a param', () => {
    const text = PRE + "param K = 0.1 in [0, 1]\nu' = u + dt * sum n in N4: u[n] - uu + KK * 0\n";
    const a = analyse(text);
    const [uu, kk] = a.diagnostics.filter((d) => d.code === 'unknown-name');
    const f1 = fixesFor(uu, a.checked.program, text, opts);
    expect(f1.map((f) => [f.title, f.preferred])).toEqual([['Replace `uu` by `u`', true], ['Declare `uu` as a param', false]]);
    const f2 = fixesFor(kk, a.checked.program, text, opts);
    expect(f2[0].title).toBe('Replace `KK` by `K`');
    const declared = applyEdits(text, f2[1].edits);
    expect(declared.split('\n').slice(4, 6)).toEqual(['param K = 0.1 in [0, 1]', 'param KK = 1 in [0, 10]']);
    expect(analyse(declared).diagnostics.filter((d) => d.code === 'unknown-name').map((d) => d.data?.name)).toEqual(['uu']);
  });

  it('declares a param before the step when there is no param yet, and only for values (not calls)', () => {
    const text = "grid 2d\nstep dt = 0.1\nsteps 5\nfield u = image\nu' = u * lam + sqr(u)\n";
    const a = analyse(text);
    const [lam, sqr] = a.diagnostics.filter((d) => d.code === 'unknown-name');
    const f = fixesFor(lam, a.checked.program, text, opts);
    expect(f.map((x) => [x.title, x.preferred])).toEqual([['Declare `lam` as a param', true]]);
    expect(applyEdits(text, f[0].edits).split('\n')[1]).toBe('param lam = 1 in [0, 10]');
    expect(fixesFor(sqr, a.checked.program, text, opts).map((x) => x.title)).not.toContain('Declare `sqr` as a param');
  });

  it('renames the step to dt', () => {
    const text = "grid 2d\nstep tau = 0.1\nsteps 5\nfield u = image\nu' = u\n";
    const fixes = fixesOf(text, 'step-name');
    expect(applyEdits(text, fixes[0].edits).split('\n')[1]).toBe('step dt = 0.1');
  });

  it('removes an unused declaration with its whole line', () => {
    const text = PRE + "param K = 1 in [0, 2]\nfn f(a) = a\nlet w = u\nneighbours S = {[1,0]}\nu' = u\n";
    const a = analyse(text);
    let t = text;
    for (const code of ['unused-set', 'unused-let', 'unused-function', 'unused-param']) {
      const d = a.diagnostics.find((x) => x.code === code)!;
      const [fix] = fixesFor(d, a.checked.program, text, opts);
      expect(fix.title).toMatch(/^Remove the unused /);
      t = applyEdits(t, fix.edits);
    }
    expect(t).toBe(PRE + "u' = u\n");
    expect(analyse(t).diagnostics.filter((d) => d.severity !== 'info')).toEqual([]);
  });
});

describe('channel fix', () => {
  it('replaces a misspelt channel by the suggestion, and the fixed text checks clean', () => {
    const text = 'grid 2d\nstep dt = 0.1\nsteps 3\nfield r = image.gren\nr\' = r';
    const fixes = fixesOf(text, 'image-channel');
    expect(fixes.map((f) => [f.title, f.preferred])).toEqual([['Replace `.gren` by `.green`', true]]);
    const fixed = applyEdits(text, fixes[0].edits);
    expect(fixed.split('\n')[3]).toBe('field r = image.green');
    expect(analyse(fixed).diagnostics.filter((d) => d.severity === 'error')).toEqual([]);
  });
});
