// Acceptance (issue 3): every bundled example runs without monitor warnings at its declared step, and at three
// times the analysis' stable limit the monitors fire with step, pixel and the update's source range.
// Sources for the expectations, per example, sit beside the table below.
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { analyseStability } from '../../../src/analysis/stability';
import { createRun, type RunImage } from '../../../src/engine';
import { makeScene } from '../../../src/images/scenes';
import { makeMask } from '../../../src/images/inputs';
import { schemeOf } from '../../unit/engine/util';

const EXAMPLES = join(__dirname, '..', '..', '..', 'examples');
const SIZE = 96;

/**
 * Which examples obey a discrete extremum principle (so the new-extremum monitor must be on), and the scene each
 * runs on. Sources: explicit linear and nonlinear diffusion with non-negative weights summing to 1 keeps every
 * value within the initial [min, max] (J. Weickert, Anisotropic Diffusion in Image Processing, Teubner 1998,
 * ch. 3, discrete nonlinear diffusion; this covers heat, Perona–Malik, the 8-neighbour and TV-flow variants);
 * first-order upwind transport under the CFL condition c·dt/h ≤ 1 is monotone (R. J. LeVeque, Finite Volume
 * Methods for Hyperbolic Problems, CUP 2002, §6.12); the wave equation and Gray–Scott reaction–diffusion have
 * no maximum principle (oscillation, reaction terms).
 */
const TABLE: Record<string, { extremum: boolean; scene: 'survey' | 'cells' | 'card' }> = {
  'edge-preserving.fluxel': { extremum: true, scene: 'survey' },
  'eight-neighbour.fluxel': { extremum: true, scene: 'cells' },
  'gray-scott.fluxel': { extremum: false, scene: 'cells' },
  'heat-1d.fluxel': { extremum: true, scene: 'card' },
  'heat-2d.fluxel': { extremum: true, scene: 'card' },
  'tv-flow.fluxel': { extremum: true, scene: 'survey' },
  'upwind-transport.fluxel': { extremum: true, scene: 'card' },
  'wave.fluxel': { extremum: false, scene: 'survey' },
  // Heat flow with a rate in [0, 1] per pixel (the mask's complement) keeps non-negative weights summing to 1
  // (Weickert 1998, ch. 3, as above, with a space-dependent diffusivity); the colour example is Perona–Malik per channel.
  'masked-smoothing.fluxel': { extremum: true, scene: 'survey' },
  'colour-edge-preserving.fluxel': { extremum: true, scene: 'cells' },
};

describe('bundled examples', () => {
  it('the table covers every example', () => {
    expect(readdirSync(EXAMPLES).filter(f => f.endsWith('.fluxel')).sort()).toEqual(Object.keys(TABLE).sort());
  });

  for (const [file, expected] of Object.entries(TABLE)) {
    it(`${file}: quiet at its declared dt, monitors fire at 3× the stable limit`, () => {
      const scheme = schemeOf(readFileSync(join(EXAMPLES, file), 'utf8'));
      const needsImage = scheme.fields.some(f => f.init.kind === 'image');
      // Light noise: with noise of the order of K, the extreme pixels are noise spikes whose links the diffusivity
      // switches off (the flux s·g(s) falls beyond K), so an over-large dt overshoots only inside the noisy range.
      const scene = makeScene(expected.scene, { width: SIZE, height: SIZE, noise: 0.01, seed: 7 });
      const image: RunImage | null = needsImage ? scene.noisy : null;
      const report = analyseStability(scheme);
      // Named inputs (the mask) get the generated mask; the channels of a grey scene are the grey picture.
      const fieldImages = Object.fromEntries(scheme.fields.filter(f => f.init.kind === 'image' && f.init.input !== null).map(f => [f.name, makeMask(SIZE, SIZE)]));
      const base = { image, fieldImages, width: SIZE, height: SIZE, monitors: { extremumCheck: 'auto' as const, stability: report } };

      const calm = createRun(scheme, base);
      expect(calm.extremumDecision.applies, `extremum monitor on/off: ${calm.extremumDecision.reason}`).toBe(expected.extremum);
      const r = calm.runSync();
      expect(r.warnings.map(w => w.message), 'no warnings at the declared dt').toEqual([]);
      expect([r.status, r.stepsDone]).toEqual(['done', scheme.steps]);

      expect(report.limit, `${file} has a finite stable limit (${report.reason})`).not.toBeNull();
      const dt = 3 * (report.limit as number);
      const wild = createRun(scheme, { ...base, dt, steps: Math.max(scheme.steps, 200) });
      const rw = wild.runSync();
      expect(rw.warnings.length, `at dt = ${dt} some monitor fires (status ${rw.status})`).toBeGreaterThan(0);
      for (const w of rw.warnings) {
        const update = scheme.updates.find(u => u.field === w.field);
        expect(update, `warning names an updated field (${w.field})`).toBeDefined();
        expect(w.range, `${w.kind}: the source range of ${w.field}'`).toEqual(update!.range);
        expect(w.step >= 1 && w.step <= rw.stepsDone, `${w.kind} step ${w.step}`).toBe(true);
        expect(w.x >= 0 && w.x < wild.geometry.width && w.y >= 0 && w.y < wild.geometry.height, `${w.kind} pixel (${w.x}, ${w.y})`).toBe(true);
        expect(w.message).toContain(`step ${w.step}`);
      }
      if (expected.extremum) {
        // With non-negative weights lost, the first symptom is a value outside the initial range.
        expect(rw.warnings[0].kind, rw.warnings[0].message).toBe('new-extremum');
      }
    });
  }
});
