// Hover content, free of the editor: finds what is under an offset in the parsed file and describes it in Markdown
// (dt/step: limit, method, reason; diffusivity: range, flux peak and an inline plot; neighbour access: its offset;
// param: its range). src/extension/hover.ts wraps the result in a MarkdownString. Must not import vscode.

import { SchemeEvaluator } from '../analysis/linearise';
import type { StabilityReport } from '../analysis/stability';
import { scalarFunction } from '../analysis/stabilityBounds';
import type { Decl, Expr, Program, SourceRange } from '../notation/ast';
import type { CheckedScheme } from '../notation/scheme';
import { diffusivityPlot } from './plot';
import { fmt, verdictOf } from './verdict';

export interface HoverResult {
  readonly markdown: string;
  readonly start: number;
  readonly end: number;
}

export interface HoverInput {
  readonly program: Program;
  readonly scheme: CheckedScheme | null;
  /** The analysis of this very text, or null while it runs (or when the scheme has errors). */
  readonly report: StabilityReport | null;
  readonly offset: number;
}

type Hit =
  | { kind: 'step'; range: SourceRange }
  | { kind: 'param'; name: string; range: SourceRange }
  | { kind: 'diffusivity'; name: string; range: SourceRange }
  | { kind: 'offset'; components: number[]; target: string; range: SourceRange }
  | { kind: 'set-offset'; target: string; variable: string; set: string; range: SourceRange };

const within = (r: SourceRange, o: number): boolean => r.start.offset <= o && o <= r.end.offset;

function literalInt(e: Expr): number | null {
  if (e.kind === 'number') return e.value;
  if (e.kind === 'unary' && e.op === '-' && e.operand.kind === 'number') return -e.operand.value;
  if (e.kind === 'unary' && e.op === '+' && e.operand.kind === 'number') return e.operand.value;
  return null;
}

function findInExpr(e: Expr, o: number, names: Names, reductions: Map<string, string>): Hit | null {
  if (!within(e.range, o)) return null;
  switch (e.kind) {
    case 'name':
      if (e.name === 'dt' && !reductions.has('dt')) return { kind: 'step', range: e.range };
      if (names.params.has(e.name)) return { kind: 'param', name: e.name, range: e.range };
      return null;
    case 'access':
      if (e.offset?.kind === 'literal') {
        for (const c of e.offset.components) { const h = findInExpr(c, o, names, reductions); if (h) return h; }
        const comps = e.offset.components.map(literalInt);
        if (comps.every((c): c is number => c !== null)) return { kind: 'offset', components: comps, target: e.target, range: e.range };
        return null;
      }
      if (e.offset?.kind === 'variable') {
        const set = reductions.get(e.offset.name);
        if (set) return { kind: 'set-offset', target: e.target, variable: e.offset.name, set, range: e.range };
      }
      return null;
    case 'unary': return findInExpr(e.operand, o, names, reductions);
    case 'binary': return findInExpr(e.left, o, names, reductions) ?? findInExpr(e.right, o, names, reductions);
    case 'if': return findInExpr(e.cond, o, names, reductions) ?? findInExpr(e.then, o, names, reductions) ?? findInExpr(e.otherwise, o, names, reductions);
    case 'reduce': {
      const inner = new Map(reductions);
      inner.set(e.variable, e.set);
      return findInExpr(e.body, o, names, inner);
    }
    case 'call':
      if (within(e.calleeRange, o) && names.diffusivities.has(e.callee)) return { kind: 'diffusivity', name: e.callee, range: e.calleeRange };
      for (const a of e.args) { const h = findInExpr(a, o, names, reductions); if (h) return h; }
      return null;
    default:
      return null;
  }
}

interface Names {
  readonly params: Set<string>;
  readonly diffusivities: Set<string>;
}

function findInDecl(d: Decl, o: number, names: Names): Hit | null {
  if (!within(d.range, o)) return null;
  switch (d.kind) {
    case 'step':
      // Anywhere on the step line: the keyword, the name, the value or its slider range.
      return { kind: 'step', range: d.name.range };
    case 'param':
      return within(d.name.range, o) ? { kind: 'param', name: d.name.name, range: d.name.range } : null;
    case 'function': {
      if (d.diffusivity && (within(d.name.range, o) || within(d.keywordRange, o))) return { kind: 'diffusivity', name: d.name.name, range: d.name.range };
      // Inside a function body its own arguments shadow params.
      const inner: Names = { params: new Set([...names.params].filter((p) => !d.params.some((a) => a.name === p))), diffusivities: names.diffusivities };
      return findInExpr(d.body, o, inner, new Map());
    }
    case 'let': return findInExpr(d.expr, o, names, new Map());
    case 'update': return findInExpr(d.expr, o, names, new Map());
    case 'field': return d.init?.kind === 'expr' ? findInExpr(d.init.expr, o, names, new Map()) : null;
    default: return null;
  }
}

function offsetWords(c: readonly number[]): string {
  const axis = (v: number, pos: string, neg: string): string => (v === 0 ? '' : `${Math.abs(v)} ${Math.abs(v) === 1 ? 'pixel' : 'pixels'} ${v > 0 ? pos : neg}`);
  const parts = [axis(c[0] ?? 0, 'right (+x)', 'left (−x)'), c.length > 1 ? axis(c[1], 'down (+y)', 'up (−y)') : ''].filter(Boolean);
  return parts.length ? parts.join(', ') : 'the pixel itself';
}

function position(c: readonly number[]): string {
  const term = (n: string, v: number): string => (v === 0 ? n : v > 0 ? `${n}+${v}` : `${n}−${-v}`);
  return c.length > 1 ? `(${term('x', c[0])}, ${term('y', c[1])})` : `(${term('x', c[0])})`;
}

function stepHover(input: HoverInput): string {
  const r = input.report;
  const step = input.program.decls.find((d) => d.kind === 'step');
  const dt = step && step.kind === 'step' ? step.value.value : null;
  const lines = [`**time step** \`dt\`${dt !== null ? ` = ${fmt(dt)}` : ''}`, ''];
  if (!input.scheme) {
    lines.push('The stability limit is computed once the scheme has no errors.');
  } else if (!r) {
    lines.push('Stability analysis running…');
  } else {
    const v = verdictOf(r);
    lines.push(`**${v.words}** — ${v.figures}`, '');
    lines.push(`- limit: ${r.unconditional ? 'none, every dt > 0 is stable' : r.limit === null ? 'none found' : `dt ≤ ${fmt(r.limit)}`}`);
    lines.push(`- method: ${v.method}`);
    if (r.positivityLimit !== undefined && r.positivityLimit !== null) lines.push(`- positivity limit: dt ≤ ${fmt(r.positivityLimit)}`);
    if (r.diffusionLimit !== undefined && r.diffusionLimit !== null) lines.push(`- diffusion part alone: dt ≤ ${fmt(r.diffusionLimit)}`);
    lines.push('', r.reason);
  }
  return lines.join('\n');
}

function paramHover(input: HoverInput, name: string): string {
  const d = input.program.decls.find((x) => x.kind === 'param' && x.name.name === name);
  if (!d || d.kind !== 'param') return `**param** \`${name}\``;
  const range = d.bounds ? `in [${fmt(d.bounds.lo.value)}, ${fmt(d.bounds.hi.value)}]` : 'no range declared (no knob)';
  return `**param** \`${name}\` = ${fmt(d.value.value)}\n\n- range: ${range}`;
}

function diffusivityHover(input: HoverInput, name: string): string {
  const lines = [`**diffusivity** \`${name}(s)\``, ''];
  const scheme = input.scheme;
  const fact = input.report?.diffusivities.find((d) => d.name === name);
  if (fact?.bound) lines.push(`- range of ${name} over the arguments met: [${fmt(fact.bound[0])}, ${fmt(fact.bound[1])}]`);
  if (fact?.argumentRange) lines.push(`- arguments met: s in [${fmt(fact.argumentRange[0])}, ${fmt(fact.argumentRange[1])}]`);
  if (fact) lines.push(`- flux s·${name}(s) peaks at ${fact.fluxPeak === null ? 'no s (it keeps growing: not edge-preserving)' : `s = ${fmt(fact.fluxPeak)} (contrasts above it are kept)`}`);
  if (fact && fact.negative.length) lines.push(`- negative for s in ${fact.negative.map((iv) => `(${fmt(iv[0])}, ${fmt(iv[1])})`).join(' ∪ ')}: backward diffusion`);
  if (!scheme) {
    lines.push('Facts and plot appear once the scheme has no errors.');
    return lines.join('\n');
  }
  let g: ((s: number) => number) | null = null;
  try {
    g = scalarFunction(scheme, new Map(scheme.params.map((p) => [p.name, p.value])), name, new SchemeEvaluator(scheme));
  } catch {
    g = null;
  }
  if (g) {
    let gMin = Infinity;
    let gMax = -Infinity;
    const sMax = fact?.fluxPeak ? 4 * fact.fluxPeak : fact?.argumentRange && Number.isFinite(fact.argumentRange[1]) && fact.argumentRange[1] > 0 ? fact.argumentRange[1] : 1;
    for (let i = 0; i <= 200; i++) {
      const v = g((i / 200) * sMax);
      if (Number.isFinite(v)) { gMin = Math.min(gMin, v); gMax = Math.max(gMax, v); }
    }
    if (!fact?.bound && gMin <= gMax) lines.push(`- values on s in [0, ${fmt(sMax)}]: [${fmt(gMin)}, ${fmt(gMax)}]`);
    const plot = diffusivityPlot(g, { sMax, mark: fact?.fluxPeak ?? null });
    lines.push('', `![plot of ${name}(s) in blue and s·${name}(s) in orange for s from 0 to ${fmt(sMax)}](${plot.dataUri})`, '', `*s from 0 to ${fmt(sMax)}; blue ${name}(s), orange s·${name}(s), each scaled to its maximum; dashed: flux peak*`);
  }
  return lines.join('\n');
}

/** The hover for the offset, or null when there is nothing to say. */
export function hoverFor(input: HoverInput): HoverResult | null {
  const names: Names = {
    params: new Set(input.program.decls.flatMap((d) => (d.kind === 'param' ? [d.name.name] : []))),
    diffusivities: new Set(input.program.decls.flatMap((d) => (d.kind === 'function' && d.diffusivity ? [d.name.name] : []))),
  };
  let hit: Hit | null = null;
  for (const d of input.program.decls) {
    hit = findInDecl(d, input.offset, names);
    if (hit) break;
  }
  if (!hit) return null;
  let markdown: string;
  switch (hit.kind) {
    case 'step': markdown = stepHover(input); break;
    case 'param': markdown = paramHover(input, hit.name); break;
    case 'diffusivity': markdown = diffusivityHover(input, hit.name); break;
    case 'offset':
      markdown = `**neighbour** \`${hit.target}[${hit.components.join(',')}]\`\n\n- offset (${hit.components.join(', ')}): ${offsetWords(hit.components)}\n- reads ${hit.target} at ${position(hit.components)}`;
      break;
    case 'set-offset': {
      const setOffsets = input.scheme?.neighbourSets.get(hit.set);
      const list = setOffsets ? setOffsets.map((c) => `(${c.join(', ')})`).join(' ') : 'the offsets of the set';
      markdown = `**neighbour** \`${hit.target}[${hit.variable}]\`\n\n- ${hit.variable} runs over ${hit.set}: ${list}`;
      break;
    }
  }
  return { markdown, start: hit.range.start.offset, end: hit.range.end.offset };
}
