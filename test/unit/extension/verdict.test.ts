// The verdict words and details for the bundled examples, from the real analysis.

import { describe, expect, it } from 'vitest';
import { detailsMarkdown, statusWords, verdictOf } from '../../../src/extension/verdict';
import { HEAT, analyse, example } from './helpers';

describe('verdict', () => {
  it.each([
    ['heat-2d.fluxel', 'within', 'within limit', 'dt 0.2 / 0.25'],
    ['edge-preserving.fluxel', 'within', 'within limit', 'dt 0.2 / 0.25'],
    ['gray-scott.fluxel', 'estimate', 'estimate only', 'dt 1 / 1.141'],
    ['wave.fluxel', 'within', 'within limit', 'dt 0.5 / 0.7071'],
  ])('%s: %s', (file, kind, words, figures) => {
    const v = verdictOf(analyse(example(file)).report!);
    expect([v.kind, v.words, v.figures]).toEqual([kind, words, figures]);
  });

  it('over the limit', () => {
    const v = verdictOf(analyse(HEAT('0.3')).report!);
    expect([v.kind, v.words, v.figures, v.method]).toEqual(['over', 'over the limit', 'dt 0.3 / 0.25', 'von Neumann analysis']);
  });

  it('details list the method, limits and diffusivity facts', () => {
    const md = detailsMarkdown('edge-preserving.fluxel', analyse(example('edge-preserving.fluxel')).report!);
    expect(md).toContain('# Stability of edge-preserving.fluxel');
    expect(md).toContain('**within limit** — dt 0.2 / 0.25');
    expect(md).toContain('- method: positivity (extremum principle) bound');
    expect(md).toContain('## Diffusivity g');
    expect(md).toContain('peaks at: s = 0.06');
  });

  it('status text has one icon and our words', () => {
    expect(statusWords({ analysis: 'done', report: analyse(HEAT('0.3')).report }).text).toBe('$(warning) over the limit · dt 0.3 / 0.25');
    expect(statusWords({ analysis: 'done', report: analyse(example('gray-scott.fluxel')).report }).text).toBe('$(info) estimate only · dt 1 / 1.141');
    expect(statusWords({ analysis: 'not-applicable', report: null }).text).toBe('$(error) Fluxel: fix errors first');
    expect(statusWords({ analysis: 'running', report: null }).text).toBe('$(loading~spin) Fluxel: analysing');
    expect(statusWords(undefined).text).toBe('$(loading~spin) Fluxel: checking');
  });
});
