// `fluxel export` as users run it (the built dist/cli.js): stdout by default, --out replaced only on success,
// one-line messages for bad input, and the header facts (hash = sha256sum of the file, the analysis' limit).
// External references: Node's crypto SHA-256 of the file bytes, gcc -fsyntax-only on the printed C.
import { spawnSync, execFileSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';

const ROOT = join(__dirname, '../..');
const CLI = join(ROOT, 'dist/cli.js');

function fluxel(...args: string[]) {
  const r = spawnSync(process.execPath, [CLI, ...args], { cwd: ROOT, encoding: 'utf8' });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}

describe('fluxel export', () => {
  it('prints C to stdout with the source hash, the stable limit and the params', () => {
    const r = fluxel('export', 'examples/edge-preserving.fluxel', '--to', 'c');
    expect(r.code, r.stderr).toBe(0);
    const hash = createHash('sha256').update(readFileSync(join(ROOT, 'examples/edge-preserving.fluxel'))).digest('hex');
    expect(r.stdout).toContain(`Source SHA-256: ${hash}`);
    // README's stability table: edge-preserving, positivity, limit 0.25.
    expect(r.stdout).toMatch(/Stable step limit \(positivity\): dt <= 0\.25\./);
    expect(r.stdout).toMatch(/K = 0\.06 in \[0\.005, 0\.5\]/);
    const dir = mkdtempSync(join(tmpdir(), 'fluxel-cli-export-'));
    writeFileSync(join(dir, 'x.c'), r.stdout);
    expect(() => execFileSync('gcc', ['-fsyntax-only', '-std=c99', join(dir, 'x.c')], { stdio: 'pipe' })).not.toThrow();
  });
  it('--out writes the file; a failing export leaves an existing file untouched', () => {
    const dir = mkdtempSync(join(tmpdir(), 'fluxel-cli-export-'));
    const out = join(dir, 'scheme.py');
    expect(fluxel('export', 'examples/heat-2d.fluxel', '--to', 'numpy', '--out', out, '--float64').code).toBe(0);
    expect(readFileSync(out, 'utf8')).toMatch(/DTYPE = fx_np\.float64/);
    const bad = join(dir, 'coords.fluxel');
    writeFileSync(bad, 'grid 2d\nstep dt = 0.1\nsteps 1\nfield u = image\nu\' = u + dt * x\n');
    const r = fluxel('export', bad, '--to', 'dask', '--out', out);
    expect(r.code).toBe(1);
    expect(r.stderr.trim().split('\n')).toHaveLength(1);
    expect(r.stderr).toMatch(/coords\.fluxel:5: cannot export to dask: `x` read in a let or update does not export to Dask/);
    expect(readFileSync(out, 'utf8')).toMatch(/DTYPE = fx_np\.float64/);
  });
  it('wrong usage exits 2 with one clear line', () => {
    const r = fluxel('export', 'examples/heat-2d.fluxel', '--to', 'fortran');
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/unknown target 'fortran'; use one of c, numpy, dask, js/);
    expect(fluxel('export', 'examples/heat-2d.fluxel').code).toBe(2);
  });
  it('a file with errors exits 1 and names the error', () => {
    const dir = mkdtempSync(join(tmpdir(), 'fluxel-cli-export-'));
    const f = join(dir, 'bad.fluxel');
    writeFileSync(f, 'grid 2d\nstep dt = 0.1\nsteps 1\nfield u = image\nu\' = u + nope\n');
    const r = fluxel('export', f, '--to', 'js');
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(/bad\.fluxel:5:\d+ error /);
  });
});
