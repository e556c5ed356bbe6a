// Quick-fix planning, free of the editor: from one diagnostic (its code and `data`) and the parsed file, the list of
// fixes as plain text edits by offset. src/extension/quickFixes.ts turns them into undoable WorkspaceEdits.
// Must not import vscode; fixes never re-run the checker or the analysis (everything comes from `data`).

import type { Program, SourceRange } from '../notation/ast';
import type { Diagnostic } from '../notation/diagnostics';

export interface TextEditSpec {
  readonly start: number;
  readonly end: number;
  readonly newText: string;
}

export interface FixSpec {
  readonly title: string;
  readonly edits: readonly TextEditSpec[];
  readonly preferred: boolean;
}

export interface FixOptions {
  /** Fraction of the limit used by the "safety" fix, in (0, 1]. */
  readonly safetyFraction: number;
}

/** Writes a step value that never exceeds `limit`: an exact short decimal when the limit is one, else rounded down. */
export function stepText(limit: number, digits = 4): string {
  if (!(limit > 0) || !Number.isFinite(limit)) return String(limit);
  const short = Number(limit.toPrecision(6));
  if (Math.abs(short - limit) <= 1e-9 * limit) return String(short);
  const e = Math.floor(Math.log10(limit)) - (digits - 1);
  const scale = 10 ** e;
  const down = Math.floor(limit / scale + 1e-9) * scale;
  return String(Number(down.toPrecision(digits)));
}

function num(v: unknown): number | null {
  return typeof v === 'number' && Number.isFinite(v) ? v : null;
}

function str(v: unknown): string | null {
  return typeof v === 'string' && v.length > 0 ? v : null;
}

function isRange(v: unknown): v is SourceRange {
  const r = v as SourceRange | null;
  return !!r && typeof r === 'object' && typeof r.start?.offset === 'number' && typeof r.end?.offset === 'number';
}

/** Edits that set the declared step to `value` (and widen its slider range's low end when needed). */
function setStepEdits(program: Program, value: string): TextEditSpec[] | null {
  const step = program.decls.find((d) => d.kind === 'step');
  if (!step || step.kind !== 'step') return null;
  const edits: TextEditSpec[] = [{ start: step.value.range.start.offset, end: step.value.range.end.offset, newText: value }];
  if (step.bounds && Number(value) < step.bounds.lo.value) {
    edits.push({ start: step.bounds.lo.range.start.offset, end: step.bounds.lo.range.end.offset, newText: value });
  }
  return edits;
}

/** The whole lines a declaration occupies, with their line break, so removing them leaves no blank line. */
function wholeLines(text: string, start: number, end: number): { start: number; end: number } {
  let s = start;
  while (s > 0 && text[s - 1] !== '\n') s--;
  let e = end;
  while (e < text.length && text[e] !== '\n') e++;
  if (e < text.length) e++;
  // Only widen to the line start if nothing but blanks precedes the declaration on its line.
  if (text.slice(s, start).trim() !== '') s = start;
  return { start: s, end: e };
}

/** Where a new `param` line goes: after the last param, else before the step, else after the grid lines. */
function paramInsertOffset(program: Program, text: string): number {
  const decls = program.decls;
  const lastParam = [...decls].reverse().find((d) => d.kind === 'param');
  const anchor = lastParam ?? null;
  if (anchor) return wholeLines(text, anchor.range.start.offset, anchor.range.end.offset).end;
  const step = decls.find((d) => d.kind === 'step');
  if (step) return wholeLines(text, step.range.start.offset, step.range.end.offset).start;
  const setting = [...decls].reverse().find((d) => d.kind === 'grid' || d.kind === 'spacing' || d.kind === 'boundary');
  if (setting) return wholeLines(text, setting.range.start.offset, setting.range.end.offset).end;
  return 0;
}

/** Every fix for one diagnostic; exactly one is marked preferred when there is any. */
export function fixesFor(d: Diagnostic, program: Program, text: string, opts: FixOptions): FixSpec[] {
  const data = d.data ?? {};
  const out: FixSpec[] = [];
  switch (d.code) {
    case 'step-over-limit':
    case 'step-limit': {
      const limit = num(data.limit);
      if (limit === null || !(limit > 0)) break;
      const full = stepText(limit);
      const fraction = Math.min(1, Math.max(0.01, opts.safetyFraction));
      const safe = stepText(limit * fraction, 3);
      const over = d.code === 'step-over-limit';
      const fullEdits = setStepEdits(program, full);
      const safeEdits = setStepEdits(program, safe);
      if (over && fullEdits) out.push({ title: `Set dt to the stable limit (${full})`, edits: fullEdits, preferred: false });
      if (safeEdits && fraction < 1 && (over || Number(safe) !== num(data.dt))) {
        out.push({ title: `Set dt to ${Math.round(fraction * 100)}% of the limit (${safe})`, edits: safeEdits, preferred: over });
      }
      if (over && out.length > 0 && !out.some((f) => f.preferred)) out[0] = { ...out[0], preferred: true };
      break;
    }
    case 'step-over-positivity-limit': {
      const pl = num(data.positivityLimit);
      if (pl === null || !(pl > 0)) break;
      const v = stepText(pl);
      const edits = setStepEdits(program, v);
      if (edits) out.push({ title: `Set dt to the positivity limit (${v}), so no weight is negative`, edits, preferred: true });
      break;
    }
    case 'unknown-name': {
      const name = str(data.name);
      const suggestion = str(data.suggestion);
      if (suggestion) {
        out.push({ title: `Replace \`${name ?? ''}\` by \`${suggestion}\``, edits: [{ start: d.range.start.offset, end: d.range.end.offset, newText: suggestion }], preferred: true });
      }
      // A name followed by `(` is a call: declaring a param would not help there.
      const after = text.slice(d.range.end.offset).match(/^\s*(.)/)?.[1];
      if (name && after !== '(' && /^[A-Za-z_][A-Za-z0-9_]*$/.test(name)) {
        const at = paramInsertOffset(program, text);
        const needsBreak = at > 0 && text[at - 1] !== '\n';
        out.push({
          title: `Declare \`${name}\` as a param`,
          edits: [{ start: at, end: at, newText: `${needsBreak ? '\n' : ''}param ${name} = 1 in [0, 10]\n` }],
          preferred: !suggestion,
        });
      }
      break;
    }
    case 'image-channel': {
      const name = str(data.name);
      const suggestion = str(data.suggestion);
      if (suggestion) out.push({ title: `Replace \`.${name ?? ''}\` by \`.${suggestion}\``, edits: [{ start: d.range.start.offset, end: d.range.end.offset, newText: suggestion }], preferred: true });
      break;
    }
    case 'step-name': {
      const replacement = str(data.replacement) ?? 'dt';
      out.push({ title: `Rename the step to \`${replacement}\``, edits: [{ start: d.range.start.offset, end: d.range.end.offset, newText: replacement }], preferred: true });
      break;
    }
    case 'unused-param':
    case 'unused-function':
    case 'unused-let':
    case 'unused-set': {
      const name = str(data.name);
      if (!name || !isRange(data.declRange)) break;
      const r = wholeLines(text, data.declRange.start.offset, data.declRange.end.offset);
      const what = d.code.slice('unused-'.length);
      out.push({ title: `Remove the unused ${what === 'function' ? 'function' : what} \`${name}\``, edits: [{ start: r.start, end: r.end, newText: '' }], preferred: true });
      break;
    }
    default:
      break;
  }
  return out;
}
