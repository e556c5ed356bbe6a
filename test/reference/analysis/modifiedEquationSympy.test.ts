// The modified equation and the moments of L against an independent symbolic computation: SymPy's series of
// log G(s)/dt and (G(s) − 1)/dt (test/tools/sympy_modified_equation.py, Debian's python3-sympy called by path),
// on stencils with no special structure (asymmetric 2d weights, a source, a wide 1d stencil) as well as the
// textbook ones. Both sides are exact up to rounding: SymPy works in rationals, we in Float64.
import { spawnSync } from 'node:child_process';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { parseAndCheck } from '../../../src/notation/index';
import { modifiedEquation, type Term } from '../../../src/analysis/modifiedEquation';

const PYTHON = '/usr/bin/python3';
const SCRIPT = join(__dirname, '..', '..', 'tools', 'sympy_modified_equation.py');

interface Case { name: string; dims: 1 | 2; h: number; dt: number; weights: [number, number, string][] }

const CASES: Case[] = [
  { name: '1d upwind, ν = 0.6', dims: 1, h: 0.5, dt: 0.3, weights: [[0, 0, '0.4'], [-1, 0, '0.6']] },
  { name: '1d Lax–Wendroff, ν = 0.5', dims: 1, h: 1, dt: 0.5, weights: [[-1, 0, '0.375'], [0, 0, '0.75'], [1, 0, '-0.125']] },
  { name: '1d five-point, wide and skewed', dims: 1, h: 0.25, dt: 0.01, weights: [[-2, 0, '0.01'], [-1, 0, '0.2'], [0, 0, '0.55'], [1, 0, '0.19'], [2, 0, '0.05']] },
  {
    name: '2d asymmetric 3×3 weights', dims: 2, h: 0.5, dt: 0.1,
    weights: [[-1, -1, '0.01'], [0, -1, '0.08'], [1, -1, '0.02'], [-1, 0, '0.05'], [0, 0, '0.7'], [1, 0, '0.04'], [-1, 1, '0.03'], [0, 1, '0.06'], [1, 1, '0.01']],
  },
  { name: '2d 5-point with a source (sum 1.05)', dims: 2, h: 1, dt: 0.2, weights: [[0, 0, '0.25'], [1, 0, '0.2'], [-1, 0, '0.2'], [0, 1, '0.2'], [0, -1, '0.2']] },
];

function schemeText(c: Case): string {
  const terms = c.weights.map(([dx, dy, w]) => `${w} * u${dx === 0 && dy === 0 ? '' : c.dims === 2 ? `[${dx},${dy}]` : `[${dx}]`}`);
  return `grid ${c.dims}d\nspacing ${c.h}\nboundary periodic\nstep dt = ${c.dt}\nsteps 1\nfield u = image\nu' = ${terms.join(' + ')}\n`;
}

const byKey = (groups: readonly (readonly Term[])[]): Map<string, number> => {
  const m = new Map<string, number>();
  for (const g of groups) for (const t of g) m.set(`${t.i},${t.j}`, t.coef);
  return m;
};

describe('modified equation against SymPy', () => {
  const r = spawnSync(PYTHON, [SCRIPT], { input: JSON.stringify(CASES.map(({ dims, h, dt, weights }) => ({ dims, h, dt, weights }))), encoding: 'utf8' });
  it('the SymPy script ran', () => {
    expect(r.status, r.stderr).toBe(0);
  });
  const ref: { modified: Record<string, number>; moments: Record<string, number> }[] = r.status === 0 ? JSON.parse(r.stdout) : [];
  CASES.forEach((c, k) => {
    it(`${c.name}: every coefficient up to order 4`, () => {
      const parsed = parseAndCheck(schemeText(c));
      expect(parsed.scheme, parsed.diagnostics.map((d) => d.message).join('; ')).not.toBeNull();
      const f = modifiedEquation(parsed.scheme!).fields[0];
      const mine = { modified: byKey(f.modified!.slice(0, 5)), moments: byKey(f.moments.slice(0, 5)) };
      for (const kind of ['modified', 'moments'] as const) {
        const theirs = ref[k][kind];
        const keys = new Set([...Object.keys(theirs).filter((key) => key !== '0,0' || kind === 'modified'), ...mine[kind].keys()]);
        let scale = 0;
        for (const v of Object.values(theirs)) scale = Math.max(scale, Math.abs(v));
        for (const key of keys) {
          const a = mine[kind].get(key) ?? 0;
          // SymPy's moments series holds G − 1, so its (0, 0) term is the source; ours lists it as moments[0].
          const b = theirs[key] ?? 0;
          expect(Math.abs(a - b) <= 1e-10 * scale, `${kind} ${key}: ours ${a}, SymPy ${b}`).toBe(true);
        }
      }
    });
  });
});
