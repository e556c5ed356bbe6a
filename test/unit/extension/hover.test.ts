// Hover content with plain objects: what each kind of token under the cursor shows.

import { describe, expect, it } from 'vitest';
import { hoverFor } from '../../../src/extension/hoverText';
import { diffusivityPlot } from '../../../src/extension/plot';
import { HEAT, analyse, example } from './helpers';

function hoverAt(text: string, needle: string, delta = 0, analysed = true) {
  const a = analyse(text);
  const at = text.indexOf(needle);
  expect(at, `"${needle}" is in the text`).toBeGreaterThanOrEqual(0);
  return hoverFor({ program: a.checked.program, scheme: a.checked.scheme, report: analysed ? a.report : null, offset: at + delta });
}

describe('hover', () => {
  it('on the step shows the verdict, the limit, the method and the reason', () => {
    const h = hoverAt(HEAT('0.3'), 'dt =')!;
    expect(h.markdown).toContain('**over the limit** — dt 0.3 / 0.25');
    expect(h.markdown).toContain('- limit: dt ≤ 0.25');
    expect(h.markdown).toContain('- method: von Neumann analysis');
    expect(h.markdown).toMatch(/Von Neumann: .*first exceeded/);
    const text = HEAT('0.3');
    expect(text.slice(h.start, h.end)).toBe('dt');
    expect(hoverAt(text, '0.3 in')!.markdown).toBe(h.markdown);
    expect(hoverAt(text, 'step')!.markdown).toBe(h.markdown);
  });

  it('on dt inside an update shows the same, and says so while the analysis runs', () => {
    expect(hoverAt(HEAT('0.2'), "u + dt", 4)!.markdown).toContain('**within limit** — dt 0.2 / 0.25');
    expect(hoverAt(HEAT('0.2'), "u + dt", 4, false)!.markdown).toContain('Stability analysis running…');
  });

  it('on a scheme with errors says the limit waits for a clean scheme', () => {
    expect(hoverAt(HEAT('0.2').replace('sum n in N4', 'sum n in N5'), 'dt =')!.markdown).toContain('computed once the scheme has no errors');
  });

  it('on a param shows its value and range', () => {
    const text = example('edge-preserving.fluxel');
    expect(hoverAt(text, 'K =')!.markdown).toBe('**param** `K` = 0.06\n\n- range: in [0.005, 0.5]');
    // A use of the param inside the diffusivity body.
    expect(hoverAt(text, 's / K', 4)!.markdown).toContain('**param** `K`');
  });

  it('on a neighbour access shows its offset', () => {
    const text = example('tv-flow.fluxel');
    const h = hoverAt(text, 'u[-1,0]')!;
    expect(h.markdown).toContain('offset (-1, 0): 1 pixel left (−x)');
    expect(h.markdown).toContain('reads u at (x−1, y)');
    expect(text.slice(h.start, h.end)).toBe('u[-1,0]');
    expect(hoverAt(text, 'u[0,1]')!.markdown).toContain('1 pixel down (+y)');
  });

  it('on a reduction access lists the set offsets', () => {
    const h = hoverAt(HEAT('0.2'), 'u[n]')!;
    expect(h.markdown).toContain('n runs over N4:');
    expect(h.markdown).toMatch(/\(1, 0\).*\(0, -1\)|\(0, -1\).*\(1, 0\)/);
  });

  it('on a diffusivity shows its range, flux peak and a plot', () => {
    const text = example('edge-preserving.fluxel');
    const h = hoverAt(text, 'g(s) =')!;
    expect(h.markdown).toContain('**diffusivity** `g(s)`');
    expect(h.markdown).toContain('flux s·g(s) peaks at s = 0.06');
    expect(h.markdown).toMatch(/range of g over the arguments met: \[0\.003587, 1\]/);
    expect(h.markdown).toMatch(/!\[plot of g\(s\)[^\]]*\]\(data:image\/svg\+xml;base64,[A-Za-z0-9+/=]+\)/);
    // Calls of the diffusivity hover the same way.
    expect(hoverAt(text, 'g(w[n]')!.markdown).toContain('peaks at s = 0.06');
  });

  it('on plain text returns nothing', () => {
    expect(hoverAt(HEAT('0.2'), 'grid')).toBeNull();
  });
});

describe('diffusivity plot', () => {
  it('draws both curves inside the frame and marks the peak', () => {
    const K = 0.1;
    const p = diffusivityPlot((s) => 1 / (1 + (s / K) ** 2), { sMax: 0.4, mark: K, width: 200, height: 100 });
    expect(p.svg.startsWith('<svg xmlns="http://www.w3.org/2000/svg" width="200" height="100"')).toBe(true);
    const paths = [...p.svg.matchAll(/<path d="([^"]+)"/g)].map((m) => m[1]);
    expect(paths).toHaveLength(2);
    for (const d of paths) {
      const pts = [...d.matchAll(/[ML]([\d.]+) ([\d.]+)/g)].map((m) => [Number(m[1]), Number(m[2])]);
      expect(pts.length).toBe(121);
      for (const [x, y] of pts) { expect(x).toBeGreaterThanOrEqual(0); expect(x).toBeLessThanOrEqual(200); expect(y).toBeGreaterThanOrEqual(0); expect(y).toBeLessThanOrEqual(100); }
    }
    // g starts at its maximum (top), the flux s·g(s) at zero (bottom).
    expect(paths[0].startsWith('M8.0 8.0')).toBe(true);
    expect(paths[1].startsWith('M8.0 92.0')).toBe(true);
    expect(p.svg).toContain('stroke-dasharray');
    expect(Buffer.from(p.dataUri.split(',')[1], 'base64').toString('utf8')).toBe(p.svg);
  });

  it('leaves gaps where g is not finite and moves the axis to the middle for negative values', () => {
    const p = diffusivityPlot((s) => (s < 0.5 ? 1 - 4 * s : Infinity), { sMax: 1 });
    expect(p.svg).toContain('y1="60"');
    const g = /<path d="([^"]+)"/.exec(p.svg)![1];
    expect(g.split('M')).toHaveLength(2);
  });
});
