// The export command's pure half with plain objects: output file names per target, code built from the current
// text (the same as `fluxel export` prints for a saved file, unsaved edits included), and refusals that name the
// first error and its line.

import { createHash } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import { analyseStability } from '../../../src/analysis/stability';
import { exportScheme, TARGETS } from '../../../src/export/index';
import { buildExport, exportFileName, schemeProblem, TARGET_CHOICES } from '../../../src/extension/exportPlan';
import { parseAndCheck } from '../../../src/notation/index';
import { HEAT, example } from './helpers';

/** What the CLI prints for a file holding `text` (same hash, verdict and options). */
function cliCode(text: string, fileName: string, target: (typeof TARGETS)[number], dtype: 'float32' | 'float64'): string {
  const scheme = parseAndCheck(text).scheme!;
  const r = analyseStability(scheme);
  return exportScheme(scheme, target, {
    fileName,
    sourceHash: createHash('sha256').update(Buffer.from(text, 'utf8')).digest('hex'),
    stability: { method: r.method, limit: r.limit, unconditional: r.unconditional, reason: r.reason },
    dtype,
  });
}

describe('exportFileName', () => {
  it.each([
    ['edge-preserving.fluxel', 'c', 'edge-preserving.c'],
    ['edge-preserving.fluxel', 'js', 'edge-preserving.mjs'],
    ['edge-preserving.fluxel', 'numpy', 'edge_preserving.py'],
    ['edge-preserving.fluxel', 'dask', 'edge_preserving_dask.py'],
    ['/home/me/schemes/Heat 2D.fluxel', 'numpy', 'heat_2d.py'],
    ['C:\\schemes\\heat.fluxel', 'c', 'heat.c'],
    ['2d-heat.fluxel', 'numpy', 's_2d_heat.py'],
    ['lambda.fluxel', 'dask', 'lambda_scheme_dask.py'],
    ['notes.txt', 'js', 'notes.txt.mjs'],
  ] as const)('%s as %s → %s', (scheme, target, expected) => {
    expect(exportFileName(scheme, target)).toBe(expected);
  });

  it('gives every target its own file, so exports of one scheme never replace each other', () => {
    const names = TARGETS.map((t) => exportFileName('wave.fluxel', t));
    expect(new Set(names).size).toBe(TARGETS.length);
    expect(names.every((n) => !n.endsWith('.fluxel'))).toBe(true);
  });
});

describe('TARGET_CHOICES', () => {
  it('offers every exporter once, in the CLI order, with a label and a description', () => {
    expect(TARGET_CHOICES.map((c) => c.target)).toEqual([...TARGETS]);
    expect(TARGET_CHOICES.map((c) => c.label)).toEqual(['C', 'NumPy', 'Dask', 'JavaScript']);
    for (const c of TARGET_CHOICES) expect(c.description.length).toBeGreaterThan(10);
  });
});

describe('buildExport', () => {
  const examples = ['heat-2d.fluxel', 'edge-preserving.fluxel', 'gray-scott.fluxel'];

  it.each(examples.flatMap((e) => TARGETS.map((t) => [e, t] as const)))('%s as %s equals the CLI export of the saved file', (name, target) => {
    const text = example(name);
    for (const dtype of ['float32', 'float64'] as const) {
      const built = buildExport(text, `/somewhere/examples/${name}`, target, dtype);
      expect(built.ok, built.ok ? '' : built.message).toBe(true);
      if (!built.ok) continue;
      expect(built.code).toBe(cliCode(text, name, target, dtype));
      expect(built.fileName).toBe(exportFileName(name, target));
    }
  });

  it('uses the current text: an unsaved edit changes the code and the hash', () => {
    const saved = HEAT('0.2');
    const edited = HEAT('0.125');
    const a = buildExport(saved, 'heat.fluxel', 'c', 'float32');
    const b = buildExport(edited, 'heat.fluxel', 'c', 'float32');
    if (!a.ok || !b.ok) throw new Error('both texts check clean');
    expect(a.code).toMatch(/HEAT_DT 0\.2\b/);
    expect(b.code).toMatch(/HEAT_DT 0\.125\b/);
    const hash = createHash('sha256').update(edited, 'utf8').digest('hex');
    expect(b.code).toContain(`Source SHA-256: ${hash}`);
    expect(a.code).not.toContain(hash);
  });

  it('stores in the chosen type', () => {
    const f32 = buildExport(HEAT('0.2'), 'heat.fluxel', 'js', 'float32');
    const f64 = buildExport(HEAT('0.2'), 'heat.fluxel', 'js', 'float64');
    if (!f32.ok || !f64.ok) throw new Error('the text checks clean');
    expect(f32.code).toContain('Float32Array');
    expect(f32.code).not.toContain('Float64Array');
    expect(f64.code).toContain('Float64Array');
  });

  it('refuses a text with errors, naming the first error in source order and its line', () => {
    const text = HEAT('0.2').replace("u' = u + dt", "u' = w + dt").replace('steps 40', 'steps 40\nfield v = ');
    const errors = parseAndCheck(text).diagnostics.filter((d) => d.severity === 'error');
    expect(errors.length).toBeGreaterThan(1);
    const first = [...errors].sort((a, b) => a.range.start.offset - b.range.start.offset)[0];
    const built = buildExport(text, 'dir/heat.fluxel', 'numpy', 'float32');
    expect(built.ok).toBe(false);
    if (built.ok) return;
    expect(built.line).toBe(first.range.start.line);
    expect(built.line).toBe(8); // the syntax error is reported at the token after `field v =`
    expect(built.message).toBe(`heat.fluxel has errors; fix them before exporting. Line 8: ${first.message} (and ${errors.length - 1} more)`);
    expect(schemeProblem(text, 'heat.fluxel')).toEqual({ line: 8, message: built.message });
  });

  it('finds no problem in a clean text', () => {
    expect(schemeProblem(example('wave.fluxel'), 'wave.fluxel')).toBeNull();
  });

  it('refuses a construct the target cannot express, with its line, and exports it to the others', () => {
    const text = 'grid 2d\nspacing 1\nboundary reflect\nstep dt = 0.1\nsteps 10\nfield u = image\nu\' = u + dt * x\n';
    const dask = buildExport(text, 'coords.fluxel', 'dask', 'float32');
    expect(dask.ok).toBe(false);
    if (dask.ok) return;
    expect(dask.line).toBe(7);
    expect(dask.message).toMatch(/^coords\.fluxel cannot export to Dask\. Line 7: `x` read in a let or update does not export to Dask/);
    expect(buildExport(text, 'coords.fluxel', 'numpy', 'float32').ok).toBe(true);
  });
});
