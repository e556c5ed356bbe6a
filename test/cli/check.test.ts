// The `fluxel check` command as users run it: the built bundle dist/cli.js on the bundled examples.
// Needs `npm run build` first (the test command does it).

import { spawnSync } from 'node:child_process';
import { mkdtempSync, readdirSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';

const ROOT = join(__dirname, '../..');
const CLI = join(ROOT, 'dist/cli.js');
const EXAMPLES = readdirSync(join(ROOT, 'examples')).filter((f) => f.endsWith('.fluxel'));

function fluxel(...args: string[]) {
  const r = spawnSync(process.execPath, [CLI, ...args], { cwd: ROOT, encoding: 'utf8' });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}

function scratch(name: string, text: string): string {
  const dir = mkdtempSync(join(tmpdir(), 'fluxel-cli-'));
  const file = join(dir, name);
  writeFileSync(file, text);
  return file;
}

describe('fluxel check on the examples', () => {
  it('has the examples the notation issue asks for', () => {
    expect(EXAMPLES.length).toBeGreaterThanOrEqual(8);
  });
  for (const ex of EXAMPLES) {
    it(`${ex} checks clean (exit 0, no errors)`, () => {
      const r = fluxel('check', `examples/${ex}`);
      expect(r.stderr).toBe('');
      expect(r.code, r.stdout).toBe(0);
      expect(r.stdout).toMatch(/: 0 errors/);
    });
    it(`${ex} --json has the documented shape`, () => {
      const r = fluxel('check', '--json', `examples/${ex}`);
      expect(r.code).toBe(0);
      const j = JSON.parse(r.stdout);
      expect(j.file).toBe(`examples/${ex}`);
      expect(Array.isArray(j.diagnostics)).toBe(true);
      expect(['von-neumann', 'positivity', 'linearised']).toContain(j.stability.method);
      expect(typeof j.stability.dt).toBe('number');
      expect(typeof j.stability.stable).toBe('boolean');
      expect(typeof j.stability.reason).toBe('string');
      for (const d of j.diagnostics) {
        expect(['error', 'warning', 'info']).toContain(d.severity);
        expect(typeof d.code).toBe('string');
        expect(typeof d.message).toBe('string');
        expect(Object.keys(d.range.start).sort()).toEqual(['column', 'line']);
        expect(Object.keys(d.range.end).sort()).toEqual(['column', 'line']);
      }
    });
  }
});

describe('fluxel check on broken input', () => {
  it('prints file:line:col severity code message and exits 1', () => {
    const file = scratch('broken.fluxel', "grid 2d\nstep dt = 0.1\nsteps 3\nfield u = image\nu' = u + uu\n");
    const r = fluxel('check', file);
    expect(r.code).toBe(1);
    expect(r.stdout).toContain(`${file}:5:10 error unknown-name Unknown name \`uu\`; did you mean \`u\`?`);
  });

  it('gives 1-based, end-exclusive ranges in JSON', () => {
    const file = scratch('broken.fluxel', "grid 2d\nstep dt = 0.1\nsteps 3\nfield u = image\nu' = u + uu\n");
    const r = fluxel('check', file, '--json');
    expect(r.code).toBe(1);
    const j = JSON.parse(r.stdout);
    expect(j.stability).toEqual({ method: 'none', limit: null, dt: 0.1, stable: false, worst: null, reason: 'The scheme has errors, so no stability analysis was run.' });
    const d = j.diagnostics.find((x: { code: string }) => x.code === 'unknown-name');
    expect(d).toEqual({
      severity: 'error',
      code: 'unknown-name',
      message: 'Unknown name `uu`; did you mean `u`?',
      range: { start: { line: 5, column: 10 }, end: { line: 5, column: 12 } },
    });
  });

  it('says so when the file cannot be read (exit 1)', () => {
    const r = fluxel('check', 'no/such/file.fluxel');
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(/cannot read no\/such\/file.fluxel/);
  });

  it('treats wrong usage as exit 2', () => {
    expect(fluxel('check').code).toBe(2);
    expect(fluxel('check', '--nonsense', 'examples/heat-2d.fluxel').code).toBe(2);
    expect(fluxel('frobnicate').code).toBe(2);
  });
});
