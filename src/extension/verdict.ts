// The stability verdict in our own words (within limit · over the limit · estimate only · no bound known),
// from an analysis report, for the status item, the details view and the hover. Must not import vscode.

import type { StabilityReport } from '../analysis/stability';

export type VerdictKind = 'within' | 'over' | 'estimate' | 'unknown';

export interface Verdict {
  readonly kind: VerdictKind;
  /** Short words for the status bar: "within limit", "over the limit", ... */
  readonly words: string;
  /** "dt 0.2 / 0.25", "dt 0.2, any dt > 0", "dt 0.2, no limit". */
  readonly figures: string;
  readonly method: string;
}

export const METHOD_WORDS: Record<string, string> = {
  'von-neumann': 'von Neumann analysis',
  positivity: 'positivity (extremum principle) bound',
  linearised: 'linearised local estimate',
  none: 'no method applies',
};

export function fmt(v: number): string {
  if (v === Infinity) return '∞';
  if (v === -Infinity) return '−∞';
  return Number(v.toPrecision(4)).toString();
}

export function verdictOf(report: StabilityReport): Verdict {
  const method = METHOD_WORDS[report.method] ?? report.method;
  let kind: VerdictKind;
  if (report.method === 'none') kind = 'unknown';
  else if (!report.stable) kind = 'over';
  else if (report.estimate) kind = 'estimate';
  else kind = 'within';
  const words = { within: 'within limit', over: 'over the limit', estimate: 'estimate only', unknown: 'no bound known' }[kind];
  const figures = report.unconditional
    ? `dt ${fmt(report.dt)}, any dt > 0`
    : report.limit === null
      ? `dt ${fmt(report.dt)}, no limit found`
      : `dt ${fmt(report.dt)} / ${fmt(report.limit)}`;
  return { kind, words, figures, method };
}

/** A Markdown report of the whole analysis, for the details view. Names come from the checker (identifiers only). */
export function detailsMarkdown(fileName: string, report: StabilityReport): string {
  const v = verdictOf(report);
  const lines = [
    `# Stability of ${fileName}`,
    '',
    `**${v.words}** — ${v.figures}`,
    '',
    `- method: ${v.method}`,
    `- declared dt: ${fmt(report.dt)}`,
    `- limit: ${report.unconditional ? 'none (every dt > 0 is stable)' : report.limit === null ? 'none found' : `dt ≤ ${fmt(report.limit)}`}`,
  ];
  if (report.positivityLimit !== undefined) lines.push(`- positivity limit (all weights ≥ 0): ${report.positivityLimit === null ? 'none' : `dt ≤ ${fmt(report.positivityLimit)}`}`);
  if (report.diffusionLimit !== undefined && report.diffusionLimit !== null) lines.push(`- limit of the diffusion part alone: dt ≤ ${fmt(report.diffusionLimit)}`);
  if (report.worst) {
    lines.push('theta' in report.worst
      ? `- worst frequency: θ = (${report.worst.theta.map((t) => `${fmt(t / Math.PI)}π`).join(', ')})`
      : `- worst pixel: (${report.worst.x}, ${report.worst.y})`);
  }
  lines.push('', report.reason);
  for (const d of report.diffusivities) {
    lines.push('', `## Diffusivity ${d.name}`);
    if (d.bound) lines.push(`- range over the arguments met: [${fmt(d.bound[0])}, ${fmt(d.bound[1])}]`);
    lines.push(`- flux s·${d.name}(s) peaks at: ${d.fluxPeak === null ? 'no peak (not edge-preserving)' : `s = ${fmt(d.fluxPeak)}`}`);
    if (d.negative.length) lines.push(`- negative (backward diffusion) for s in ${d.negative.map((iv) => `(${fmt(iv[0])}, ${fmt(iv[1])})`).join(' ∪ ')}`);
  }
  return lines.join('\n') + '\n';
}

/** The status bar's text (one codicon, our words) and tooltip for a document's analysis state. */
export function statusWords(s: { readonly analysis: 'running' | 'done' | 'off' | 'not-applicable'; readonly report: StabilityReport | null } | undefined): { text: string; tooltip: string } {
  if (!s) return { text: '$(loading~spin) Fluxel: checking', tooltip: 'Checking the scheme' };
  if (s.analysis === 'off') return { text: '$(circle-slash) Fluxel: analysis off', tooltip: 'Stability analysis is switched off (fluxel.analysis.enabled)' };
  if (s.analysis === 'not-applicable') return { text: '$(error) Fluxel: fix errors first', tooltip: 'The scheme has errors; the stability analysis runs once they are fixed' };
  if (s.analysis === 'running' || !s.report) return { text: '$(loading~spin) Fluxel: analysing', tooltip: 'Stability analysis running' };
  const v = verdictOf(s.report);
  const icon = v.kind === 'within' ? '$(check)' : v.kind === 'over' ? '$(warning)' : v.kind === 'estimate' ? '$(info)' : '$(question)';
  return { text: `${icon} ${v.words} · ${v.figures}`, tooltip: `Fluxel stability: ${v.words}, ${v.figures} (${v.method}). Click for details.` };
}
