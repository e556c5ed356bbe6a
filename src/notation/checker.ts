// The checker: resolves names, validates every declaration and expression, orders updates and lets,
// and builds the CheckedScheme when the file has no errors. Every message carries an exact range and a stable code.
// Pure: imports nothing from Node, the DOM or vscode.

import type * as A from './ast';
import { walkExpr } from './ast';
import { applyBuiltin, BUILTIN_FUNCTIONS, BUILTIN_SETS, MAX_OFFSET } from './builtins';
import type { Diagnostic, RelatedInfo, CheckerCode } from './diagnostics';
import {
  CONSTANT_NAMES, STOP_CHANGE_CAP, type Boundary, type CheckedScheme, type FieldInfo, type FunctionInfo, type LetInfo,
  type Offset, type ParamInfo, type SymbolKind, type UpdateInfo,
} from './scheme';

interface Sym {
  readonly kind: SymbolKind;
  readonly range: A.SourceRange | null;
  used: boolean;
}

interface Scope {
  /** Reduction variables in scope. */
  readonly reduceVars: ReadonlySet<string>;
  /** Function arguments in scope (inside a function body). */
  readonly fnArgs: ReadonlySet<string>;
  /** Where we are: decides where `blur` and primes may appear. */
  readonly context: 'update' | 'let' | 'function' | 'field-init' | 'constant' | 'set';
  /** Fields whose new values this update reads (filled while checking an update). */
  readonly primes?: Map<string, A.SourceRange>;
  /** Names of lets/fields this let reads (filled while checking a let). */
  readonly reads?: Set<string>;
  /** Functions called (filled while checking a function body). */
  readonly calls?: Set<string>;
}

export interface CheckResult {
  readonly diagnostics: Diagnostic[];
  readonly scheme: CheckedScheme | null;
}

export function check(program: A.Program, priorErrors = 0): CheckResult {
  return new Checker(program).run(priorErrors);
}

/** Levenshtein distance, for did-you-mean suggestions. */
export function editDistance(a: string, b: string): number {
  const m = a.length;
  const n = b.length;
  let prev = Array.from({ length: n + 1 }, (_, j) => j);
  for (let i = 1; i <= m; i++) {
    const cur = [i];
    for (let j = 1; j <= n; j++) {
      const cost = a[i - 1] === b[j - 1] ? 0 : 1;
      cur[j] = Math.min(prev[j] + 1, cur[j - 1] + 1, prev[j - 1] + cost);
    }
    prev = cur;
  }
  return prev[n];
}

/** The closest candidate within a small edit distance (case differences count as closer), or null. */
export function suggestName(name: string, candidates: Iterable<string>): string | null {
  let best: string | null = null;
  let bestD = Infinity;
  const limit = Math.max(1, Math.floor(name.length / 3));
  for (const c of candidates) {
    if (c === name) continue;
    const d = c.toLowerCase() === name.toLowerCase() ? 0.5 : editDistance(name, c);
    if (d <= limit && d < bestD) {
      best = c;
      bestD = d;
    }
  }
  return best;
}

class Checker {
  private readonly diags: Diagnostic[] = [];
  private readonly symbols = new Map<string, Sym>();
  private dims: 1 | 2 = 2;
  private readonly fieldDecls = new Map<string, A.FieldDecl>();
  private readonly paramDecls = new Map<string, A.ParamDecl>();
  private readonly letDecls = new Map<string, A.LetDecl>();
  private readonly fnDecls = new Map<string, A.FunctionDecl>();
  private readonly setDecls = new Map<string, A.NeighboursDecl>();
  private readonly setOffsets = new Map<string, Offset[]>();
  private readonly updatedFields = new Set<string>();
  private readonly fnDirectReads = new Map<string, boolean>();
  private readonly fnReadsFields = new Map<string, boolean>();

  constructor(private readonly program: A.Program) {}

  private report(code: CheckerCode, severity: Diagnostic['severity'], range: A.SourceRange, message: string, extra?: { related?: RelatedInfo[]; data?: Record<string, unknown> }): void {
    this.diags.push({ range, severity, code, message, ...(extra?.related ? { related: extra.related } : {}), ...(extra?.data ? { data: extra.data } : {}) });
  }

  private error(code: CheckerCode, range: A.SourceRange, message: string, extra?: { related?: RelatedInfo[]; data?: Record<string, unknown> }): void {
    this.report(code, 'error', range, message, extra);
  }

  run(priorErrors: number): CheckResult {
    const decls = this.program.decls;
    const settings = this.settings(decls, priorErrors === 0);
    this.declareNames(decls);
    this.checkSets();
    const functions = this.checkFunctions();
    const lets = this.checkLets();
    const fields = this.checkFields(settings.boundaries);
    const updates = this.checkUpdates(decls);
    this.reportUnused();

    // With syntax errors, a broken declaration may be the "missing" one: say nothing about absences then.
    const complete = priorErrors === 0;
    if (complete && fields.length === 0 && !decls.some((d) => d.kind === 'field')) {
      this.error('no-fields', this.firstLine(), 'The scheme declares no field: add one, e.g. `field u = image`.');
    }
    if (complete && updates.length === 0 && fields.length > 0) {
      this.report('no-updates', 'warning', this.firstLine(), 'No field has an update (`u\' = ...`): the run would change nothing.');
    }

    const hasErrors = priorErrors > 0 || this.diags.some((d) => d.severity === 'error');
    if (hasErrors || settings.dt === null || settings.steps === null) return { diagnostics: this.diags, scheme: null };

    const symbols = new Map<string, SymbolKind>();
    for (const [name, s] of this.symbols) symbols.set(name, s.kind);
    const neighbourSets = new Map<string, readonly Offset[]>();
    for (const [name, b] of BUILTIN_SETS) if (b.dims === this.dims) neighbourSets.set(name, b.offsets);
    for (const [name, o] of this.setOffsets) neighbourSets.set(name, o);
    const params: ParamInfo[] = [...this.paramDecls.values()].map((p) => ({
      name: p.name.name,
      value: p.value.value,
      lo: p.bounds?.lo.value ?? null,
      hi: p.bounds?.hi.value ?? null,
      range: p.range,
    }));
    const scheme: CheckedScheme = {
      dims: this.dims,
      spacing: settings.spacing,
      fields: fields.map((f) => ({ ...f, updated: this.updatedFields.has(f.name) })),
      params,
      dt: settings.dt,
      dtBounds: settings.dtBounds,
      stepRange: settings.stepRange!,
      steps: settings.steps,
      untilTime: settings.untilTime,
      untilChange: settings.untilChange,
      functions,
      lets,
      neighbourSets,
      updates,
      symbols,
    };
    return { diagnostics: this.diags, scheme };
  }

  private firstLine(): A.SourceRange {
    const d = this.program.decls[0];
    if (d) return d.range;
    const p = this.program.range.start;
    return { start: p, end: p };
  }

  // ---------------------------------------------------------------- settings

  private settings(decls: readonly A.Decl[], complete: boolean) {
    const seen = new Map<string, A.Decl>();
    const once = (key: string, d: A.Decl, what: string): boolean => {
      const prev = seen.get(key);
      if (prev) {
        this.error('duplicate-declaration', d.range, `${what} is declared twice; the first declaration is kept.`, {
          related: [{ range: prev.range, message: 'first declared here' }],
        });
        return false;
      }
      seen.set(key, d);
      return true;
    };
    let spacing = 1;
    let dt: number | null = null;
    let dtBounds: { lo: number; hi: number } | null = null;
    let stepRange: A.SourceRange | null = null;
    let steps: number | null = null;
    let untilTime: number | null = null;
    let untilDecl: A.UntilDecl | null = null;
    let untilChange: number | null = null;
    // The first stopping rule seen; a different second one is a conflict, the same one twice a duplicate.
    let stopRule: A.Decl | null = null;
    const stopOnce = (d: A.Decl): boolean => {
      if (stopRule && stopRule.kind !== d.kind) {
        const word = (x: A.Decl) => (x.kind === 'steps' ? '`steps N`' : x.kind === 'until' ? '`until t = T`' : '`until change < tol`');
        this.error('stop-rule-conflict', d.range, `The scheme already stops by ${word(stopRule)}; ${word(d)} is a second, conflicting stopping rule: keep one of them.`, {
          related: [{ range: stopRule.range, message: 'the first stopping rule' }],
        });
        return false;
      }
      stopRule ??= d;
      return once('steps', d, 'The number of steps (`steps` or `until`)');
    };
    let defaultBoundary: Boundary = { kind: 'reflect' };
    const perField = new Map<string, { b: Boundary; decl: A.BoundaryDecl }>();
    let gridSeen = false;

    for (const d of decls) {
      switch (d.kind) {
        case 'grid':
          if (!once('grid', d, 'The grid')) break;
          gridSeen = true;
          if (d.dims === 1 || d.dims === 2) this.dims = d.dims;
          else this.error('bad-grid', d.dimsRange, `Fluxel schemes are 1d or 2d; \`${d.dims}d\` is not supported.`);
          break;
        case 'spacing':
          if (!once('spacing', d, 'The spacing')) break;
          if (!(d.value.value > 0)) this.error('spacing-not-positive', d.value.range, 'The grid spacing h must be positive.');
          else spacing = d.value.value;
          break;
        case 'boundary': {
          const b: Boundary = d.spec.kind === 'fixed' ? { kind: 'fixed', value: d.spec.value } : { kind: d.spec.kind };
          if (d.field) {
            const key = `boundary:${d.field.name}`;
            if (!once(key, d, `The boundary of \`${d.field.name}\``)) break;
            perField.set(d.field.name, { b, decl: d });
          } else {
            if (!once('boundary', d, 'The default boundary')) break;
            defaultBoundary = b;
          }
          break;
        }
        case 'step': {
          if (!once('step', d, 'The time step')) break;
          stepRange = d.range;
          if (d.name.name !== 'dt') {
            this.error('step-name', d.name.range, `The time step is called \`dt\`; rename \`${d.name.name}\` to \`dt\`.`, { data: { replacement: 'dt' } });
          }
          if (!(d.value.value > 0)) {
            this.error('step-not-positive', d.value.range, `The time step must be positive; \`dt = ${d.value.value}\` would not advance time.`);
          } else dt = d.value.value;
          if (d.bounds) {
            const { lo, hi } = d.bounds;
            if (lo.value > hi.value) this.error('param-range-empty', d.bounds.range, `The slider range [${lo.value}, ${hi.value}] is empty: its low end exceeds its high end.`);
            else {
              if (!(lo.value > 0)) this.error('step-not-positive', lo.range, 'The low end of the step range must be positive.');
              dtBounds = { lo: lo.value, hi: hi.value };
              if (dt !== null && (dt < lo.value || dt > hi.value)) {
                this.error('step-out-of-range', d.value.range, `\`dt = ${dt}\` lies outside its range [${lo.value}, ${hi.value}].`);
              }
            }
          }
          break;
        }
        case 'steps':
          if (!stopOnce(d)) break;
          if (!Number.isInteger(d.count.value) || d.count.value < 0) {
            this.error('steps-invalid', d.count.range, `The number of steps must be a whole number ≥ 0, not ${d.count.value}.`);
          } else steps = d.count.value;
          break;
        case 'untilChange':
          if (!stopOnce(d)) break;
          if (d.variable.name !== 'change') this.error('until-change-invalid', d.variable.range, `Write \`until change < tol\` (the RMS change of one step) or \`until t = T\`; \`${d.variable.name}\` cannot be compared with \`<\`.`);
          else if (!(d.tolerance.value > 0) || !Number.isFinite(d.tolerance.value)) this.error('until-change-invalid', d.tolerance.range, 'The change tolerance must be a finite number > 0.');
          else { untilChange = d.tolerance.value; steps = STOP_CHANGE_CAP; }
          break;
        case 'until':
          if (!stopOnce(d)) break;
          if (d.variable.name !== 't') this.error('until-invalid', d.variable.range, `Write \`until t = T\`: the end condition is on the time \`t\`, not \`${d.variable.name}\`.`);
          else if (!(d.time.value >= 0) || !Number.isFinite(d.time.value)) this.error('until-invalid', d.time.range, 'The end time must be a finite number ≥ 0.');
          else untilDecl = d;
          break;
        default:
          break;
      }
    }
    if (!gridSeen && complete) {
      this.error('missing-grid', this.firstLine(), 'The scheme has no `grid` declaration: add `grid 2d` (or `grid 1d`) at the top.');
    }
    if (!stepRange && complete) this.error('missing-step', this.firstLine(), 'The scheme has no time step: add e.g. `step dt = 0.2`.');
    if (!seen.has('steps') && complete) this.error('missing-steps', this.firstLine(), 'The scheme does not say how long to run: add `steps N`, `until t = T` or `until change < tol`.');
    if (untilDecl && dt !== null) {
      const ratio = untilDecl.time.value / dt;
      steps = Math.round(ratio);
      untilTime = untilDecl.time.value;
      if (Math.abs(ratio - steps) > 1e-9 * Math.max(1, ratio)) {
        this.report('until-not-multiple', 'warning', untilDecl.time.range,
          `t = ${untilDecl.time.value} is not a whole number of steps of dt = ${dt}; the run takes ${steps} steps and ends at t = ${Number((steps * dt).toPrecision(12))}.`);
      }
    }
    return { spacing, dt, dtBounds, stepRange, steps, untilTime, untilChange, boundaries: { defaultBoundary, perField } };
  }

  // ---------------------------------------------------------------- names

  private declare(name: A.Ident, kind: SymbolKind, decl: A.Decl): boolean {
    const reserved = (CONSTANT_NAMES as readonly string[]).includes(name.name)
      ? 'a built-in constant'
      : BUILTIN_FUNCTIONS.has(name.name) || name.name === 'blur' || name.name === 'len'
        ? 'a built-in function'
        : BUILTIN_SETS.has(name.name)
          ? 'a built-in neighbour set'
          : null;
    if (reserved) {
      this.error('redefinition', name.range, `\`${name.name}\` is ${reserved} and cannot be redeclared.`);
      return false;
    }
    const prev = this.symbols.get(name.name);
    if (prev) {
      this.error('redefinition', name.range, `\`${name.name}\` is already declared (as a ${prev.kind}).`, {
        related: prev.range ? [{ range: prev.range, message: 'first declared here' }] : undefined,
      });
      return false;
    }
    this.symbols.set(name.name, { kind, range: name.range, used: false });
    void decl;
    return true;
  }

  private declareNames(decls: readonly A.Decl[]): void {
    for (const c of CONSTANT_NAMES) this.symbols.set(c, { kind: 'constant', range: null, used: true });
    for (const d of decls) {
      switch (d.kind) {
        case 'field': if (this.declare(d.name, 'field', d)) this.fieldDecls.set(d.name.name, d); break;
        case 'param': if (this.declare(d.name, 'param', d)) this.paramDecls.set(d.name.name, d); break;
        case 'let': if (this.declare(d.name, 'let', d)) this.letDecls.set(d.name.name, d); break;
        case 'function': if (this.declare(d.name, d.diffusivity ? 'diffusivity' : 'function', d)) this.fnDecls.set(d.name.name, d); break;
        case 'neighbours': if (this.declare(d.name, 'set', d)) this.setDecls.set(d.name.name, d); break;
        default: break;
      }
    }
    for (const p of this.paramDecls.values()) {
      if (!p.bounds) continue;
      const { lo, hi } = p.bounds;
      if (lo.value > hi.value) {
        this.error('param-range-empty', p.bounds.range, `The range [${lo.value}, ${hi.value}] of \`${p.name.name}\` is empty: its low end exceeds its high end.`);
      } else if (p.value.value < lo.value || p.value.value > hi.value) {
        this.error('param-out-of-range', p.value.range, `The default ${p.value.value} of \`${p.name.name}\` lies outside its range [${lo.value}, ${hi.value}].`, {
          data: { lo: lo.value, hi: hi.value },
        });
      }
    }
  }

  /** Every name a value position could refer to in the given scope, for suggestions. */
  private valueNames(scope: Scope, kinds: readonly SymbolKind[] = ['field', 'let', 'param', 'constant']): string[] {
    const out = [...scope.fnArgs];
    for (const [n, s] of this.symbols) if (kinds.includes(s.kind)) out.push(n);
    return out;
  }

  private unknown(name: string, range: A.SourceRange, candidates: Iterable<string>, what = 'name'): void {
    const suggestion = suggestName(name, candidates);
    this.error('unknown-name', range, `Unknown ${what} \`${name}\`${suggestion ? `; did you mean \`${suggestion}\`?` : '.'}`, {
      data: suggestion ? { name, suggestion } : { name },
    });
  }

  // ---------------------------------------------------------------- neighbour sets

  private constInt(e: A.Expr): number | null {
    if (e.kind === 'number') return e.value;
    if (e.kind === 'unary' && (e.op === '-' || e.op === '+')) {
      const v = this.constInt(e.operand);
      return v === null ? null : e.op === '-' ? -v : v;
    }
    return null;
  }

  /** Validates one literal offset; returns it, or null after reporting. */
  private literalOffset(components: readonly A.Expr[], range: A.SourceRange): Offset | null {
    const out: number[] = [];
    let ok = true;
    for (const c of components) {
      if (c.kind === 'error') return null;
      const v = this.constInt(c);
      if (v === null || !Number.isInteger(v)) {
        this.error('offset-not-integer', c.range, 'Offsets are whole numbers written out, such as `1`, `-1` or `0`.');
        ok = false;
      } else if (Math.abs(v) > MAX_OFFSET) {
        this.error('offset-too-large', c.range, `Offsets are limited to ±${MAX_OFFSET}; ${v} is too far.`);
        ok = false;
      } else out.push(v === 0 ? 0 : v);
    }
    if (components.length !== this.dims) {
      this.error('offset-dims', range, `A ${this.dims}d grid needs offsets with ${this.dims} component${this.dims === 1 ? '' : 's'}${this.dims === 2 ? ' ([dx, dy])' : ' ([dx])'}; this one has ${components.length}.`);
      return null;
    }
    return ok ? out : null;
  }

  private checkSets(): void {
    for (const [name, d] of this.setDecls) {
      if (d.offsets.length === 0) {
        this.error('set-empty', d.name.range, `The neighbour set \`${name}\` has no offsets.`);
        continue;
      }
      const offs: Offset[] = [];
      for (const o of d.offsets) {
        const v = this.literalOffset(o.components, o.range);
        if (v) offs.push(v);
      }
      this.setOffsets.set(name, offs);
    }
  }

  // ---------------------------------------------------------------- functions

  private checkFunctions(): Map<string, FunctionInfo> {
    const out = new Map<string, FunctionInfo>();
    const calls = new Map<string, Set<string>>();
    for (const [name, d] of this.fnDecls) {
      const args = new Set<string>();
      for (const p of d.params) {
        if (args.has(p.name)) this.error('redefinition', p.range, `The argument \`${p.name}\` is listed twice.`);
        args.add(p.name);
      }
      if (d.diffusivity && d.params.length !== 1) {
        this.error('diffusivity-arity', d.name.range, `A diffusivity is a function of one argument (the contrast s), e.g. \`diffusivity ${name}(s) = ...\`; this one takes ${d.params.length}.`);
      }
      const scope: Scope = { reduceVars: new Set(), fnArgs: args, context: 'function', calls: new Set(), reads: new Set() };
      this.expr(d.body, scope);
      calls.set(name, scope.calls!);
      this.fnDirectReads.set(name, scope.reads!.size > 0);
      out.set(name, { name, diffusivity: d.diffusivity, params: d.params.map((p) => p.name), body: d.body, decl: d });
    }
    // Recursion: a depth-first search over the call graph; report each function on a cycle once.
    const state = new Map<string, 0 | 1 | 2>();
    const reported = new Set<string>();
    const visit = (f: string, stack: string[]): void => {
      state.set(f, 1);
      for (const g of calls.get(f) ?? []) {
        if (!calls.has(g)) continue;
        if (state.get(g) === 1) {
          const cycle = stack.slice(stack.indexOf(g));
          for (const c of cycle) {
            if (reported.has(c)) continue;
            reported.add(c);
            const d = this.fnDecls.get(c)!;
            this.error('recursion', d.name.range, cycle.length === 1
              ? `\`${c}\` calls itself; functions cannot be recursive.`
              : `\`${c}\` is part of a call cycle (${[...cycle, cycle[0]].join(' → ')}); functions cannot be recursive.`);
          }
        } else if (!state.get(g)) visit(g, [...stack, g]);
      }
      state.set(f, 2);
    };
    for (const f of calls.keys()) if (!state.get(f)) visit(f, [f]);
    // A function reads fields if its body does, or any function it calls does (cycles were reported above).
    const memo = new Map<string, boolean>();
    const reads = (f: string, seen: Set<string>): boolean => {
      if (memo.has(f)) return memo.get(f)!;
      if (seen.has(f)) return false;
      seen.add(f);
      const r = (this.fnDirectReads.get(f) ?? false) || [...(calls.get(f) ?? [])].some((g) => reads(g, seen));
      memo.set(f, r);
      return r;
    };
    for (const f of calls.keys()) this.fnReadsFields.set(f, reads(f, new Set()));
    return out;
  }

  /** Constant-folds an expression of numbers, params (at their defaults) and pi/h; null when it depends on anything else. */
  private fold(e: A.Expr): number | null {
    switch (e.kind) {
      case 'number': return e.value;
      case 'name': {
        if (e.name === 'pi') return Math.PI;
        const p = this.paramDecls.get(e.name);
        return p ? p.value.value : null;
      }
      case 'unary': {
        const v = this.fold(e.operand);
        return v === null ? null : e.op === '-' ? -v : e.op === '+' ? v : v === 0 ? 1 : 0;
      }
      case 'binary': {
        const a = this.fold(e.left);
        const b = this.fold(e.right);
        if (a === null || b === null) return null;
        switch (e.op) {
          case '+': return a + b;
          case '-': return a - b;
          case '*': return a * b;
          case '/': return a / b;
          case '^': return Math.pow(a, b);
          default: return null;
        }
      }
      case 'call': {
        if (!BUILTIN_FUNCTIONS.has(e.callee)) return null;
        const args = e.args.map((a) => this.fold(a));
        if (args.some((a) => a === null)) return null;
        try {
          return applyBuiltin(e.callee, args as number[]);
        } catch {
          return null;
        }
      }
      default: return null;
    }
  }

  // ---------------------------------------------------------------- lets

  private checkLets(): LetInfo[] {
    const reads = new Map<string, Set<string>>();
    const infos = new Map<string, LetInfo>();
    for (const [name, d] of this.letDecls) {
      const scope: Scope = { reduceVars: new Set(), fnArgs: new Set(), context: 'let', reads: new Set() };
      const e = d.expr;
      if (e.kind === 'call' && e.callee === 'blur') {
        // The one place `blur` is allowed: the whole right-hand side of a let.
        if (e.args.length !== 2) {
          this.error('wrong-arity', e.calleeRange, `\`blur\` takes 2 arguments (a field and sigma); ${e.args.length} given.`);
          continue;
        }
        const [src, sigma] = e.args;
        let ok = true;
        if (src.kind !== 'name' || !['field', 'let'].includes(this.symbols.get(src.name)?.kind ?? '')) {
          if (src.kind === 'name' && !this.symbols.has(src.name)) this.unknown(src.name, src.range, this.valueNames(scope, ['field', 'let']), 'field');
          else if (src.kind !== 'error') {
            if (src.kind === 'name') this.symbols.get(src.name)!.used = true;
            this.error('blur-source', src.range, '`blur` smooths a field or let field: its first argument must be one of their names.');
          }
          ok = false;
        } else {
          this.symbols.get(src.name)!.used = true;
          scope.reads!.add(src.name);
        }
        // Sigma is one number for the whole grid: it may use numbers, params, pi, h and dt, not fields, x, y or t.
        const sigmaScope: Scope = { reduceVars: new Set(), fnArgs: new Set(), context: 'constant' };
        this.expr(sigma, sigmaScope);
        const folded = this.fold(sigma);
        if (folded !== null && !(folded >= 0 && Number.isFinite(folded))) {
          this.error('blur-sigma', sigma.range, `The blur width must be a finite number ≥ 0; this one is ${folded}.`);
        }
        reads.set(name, scope.reads!);
        if (ok && src.kind === 'name') infos.set(name, { kind: 'blur', name, source: src.name, sigma, expr: e, range: d.range });
        continue;
      }
      this.expr(e, scope);
      reads.set(name, scope.reads!);
      infos.set(name, { kind: 'expr', name, expr: e, range: d.range });
    }
    // Order lets so each comes after the lets it reads; a cycle is an error.
    const order: LetInfo[] = [];
    const state = new Map<string, 0 | 1 | 2>();
    const visit = (n: string, stack: string[]): void => {
      state.set(n, 1);
      for (const r of reads.get(n) ?? []) {
        if (!this.letDecls.has(r)) continue;
        if (state.get(r) === 1) {
          const cycle = stack.slice(stack.indexOf(r));
          const d = this.letDecls.get(n)!;
          this.error('let-cycle', d.name.range, `Let fields depend on each other in a cycle (${[...cycle, r].join(' → ')}).`);
          continue;
        }
        if (!state.get(r)) visit(r, [...stack, r]);
      }
      state.set(n, 2);
      const info = infos.get(n);
      if (info) order.push(info);
    };
    for (const n of this.letDecls.keys()) if (!state.get(n)) visit(n, [n]);
    return order;
  }

  // ---------------------------------------------------------------- fields

  private checkFields(b: { defaultBoundary: Boundary; perField: Map<string, { b: Boundary; decl: A.BoundaryDecl }> }): FieldInfo[] {
    for (const [name, { decl }] of b.perField) {
      if (!this.fieldDecls.has(name)) {
        const suggestion = suggestName(name, this.fieldDecls.keys());
        this.error('boundary-unknown-field', decl.field!.range, `\`boundary ${name} ...\` names no declared field${suggestion ? `; did you mean \`${suggestion}\`?` : '.'}`, {
          data: suggestion ? { name, suggestion } : { name },
        });
      }
    }
    const out: FieldInfo[] = [];
    let index = 0;
    for (const [name, d] of this.fieldDecls) {
      let init: FieldInfo['init'] | null = null;
      if (!d.init) {
        this.error('field-uninitialised', d.name.range, `The field \`${name}\` has no initial value: write \`field ${name} = image\`, a number, or an expression in x and y.`, {
          data: { name },
        });
      } else if (d.init.kind === 'image') init = { kind: 'image' };
      else {
        const scope: Scope = { reduceVars: new Set(), fnArgs: new Set(), context: 'field-init' };
        this.expr(d.init.expr, scope);
        init = { kind: 'expr', expr: d.init.expr };
      }
      out.push({
        name,
        index: index++,
        init: init ?? { kind: 'expr', expr: { kind: 'number', value: 0, range: d.name.range } },
        boundary: b.perField.get(name)?.b ?? b.defaultBoundary,
        range: d.range,
        updated: false,
      });
    }
    return out;
  }

  // ---------------------------------------------------------------- updates

  private checkUpdates(decls: readonly A.Decl[]): UpdateInfo[] {
    const byField = new Map<string, { d: A.UpdateDecl; primes: Map<string, A.SourceRange> }>();
    for (const d of decls) {
      if (d.kind !== 'update') continue;
      const name = d.field.name;
      const scope: Scope = { reduceVars: new Set(), fnArgs: new Set(), context: 'update', primes: new Map() };
      this.expr(d.expr, scope);
      if (!this.fieldDecls.has(name)) {
        const sym = this.symbols.get(name);
        if (sym) this.error('update-unknown-field', d.field.range, `\`${name}\` is a ${sym.kind}, not a field: only fields have updates.`);
        else {
          const suggestion = suggestName(name, this.fieldDecls.keys());
          this.error('update-unknown-field', d.field.range, `\`${name}'\` updates an undeclared field${suggestion ? `; did you mean \`${suggestion}\`?` : `; declare it with \`field ${name} = ...\`.`}`, {
            data: suggestion ? { name, suggestion } : { name },
          });
        }
        continue;
      }
      const prev = byField.get(name);
      if (prev) {
        this.error('duplicate-update', d.field.range, `\`${name}\` already has an update; a field is updated once per step.`, {
          related: [{ range: prev.d.range, message: 'first update' }],
        });
        continue;
      }
      this.updatedFields.add(name);
      byField.set(name, { d, primes: scope.primes! });
    }
    // Primes must name updated fields; then order updates so that each reads only new values already computed.
    for (const { primes } of byField.values()) {
      for (const [target, range] of primes) {
        if (!byField.has(target) && this.fieldDecls.has(target)) {
          this.error('prime-unknown', range, `\`${target}'\` is the new value of \`${target}\`, but \`${target}\` has no update.`);
          primes.delete(target);
        }
      }
    }
    const order: UpdateInfo[] = [];
    const state = new Map<string, 0 | 1 | 2>();
    const reported = new Set<string>();
    const visit = (f: string, stack: string[]): void => {
      state.set(f, 1);
      const entry = byField.get(f)!;
      for (const [g, range] of entry.primes) {
        if (!byField.has(g)) continue;
        if (state.get(g) === 1) {
          const cycle = stack.slice(stack.indexOf(g));
          if (!reported.has(f)) {
            reported.add(f);
            this.error('prime-cycle', range, cycle.length === 1
              ? `\`${f}'\` cannot read its own new value.`
              : `Updates read each other's new values in a cycle (${[...cycle, g].map((c) => `${c}'`).join(' → ')}).`);
          }
          continue;
        }
        if (!state.get(g)) visit(g, [...stack, g]);
      }
      state.set(f, 2);
      order.push({ field: f, expr: entry.d.expr, range: entry.d.range, readsPrimed: [...entry.primes.keys()] });
    };
    for (const f of byField.keys()) if (!state.get(f)) visit(f, [f]);
    return order;
  }

  // ---------------------------------------------------------------- expressions

  private expr(e: A.Expr, scope: Scope): void {
    switch (e.kind) {
      case 'number':
      case 'error':
        return;
      case 'name':
        this.nameValue(e.name, e.range, scope);
        return;
      case 'access':
        this.access(e, scope);
        return;
      case 'unary':
        this.expr(e.operand, scope);
        return;
      case 'binary':
        this.expr(e.left, scope);
        this.expr(e.right, scope);
        return;
      case 'if':
        this.expr(e.cond, scope);
        this.expr(e.then, scope);
        this.expr(e.otherwise, scope);
        return;
      case 'reduce':
        this.reduce(e, scope);
        return;
      case 'call':
        this.call(e, scope);
        return;
    }
  }

  private nameValue(name: string, range: A.SourceRange, scope: Scope): void {
    if (scope.fnArgs.has(name)) return;
    if (scope.reduceVars.has(name)) {
      this.error('not-a-value', range, `\`${name}\` stands for an offset: use it as \`u[${name}]\` or \`len(${name})\`.`);
      return;
    }
    const sym = this.symbols.get(name);
    if (!sym) {
      if (BUILTIN_FUNCTIONS.has(name) || name === 'blur' || name === 'len') {
        this.error('not-a-value', range, `\`${name}\` is a built-in function: call it, e.g. \`${name}(...)\`.`);
      } else if (BUILTIN_SETS.has(name)) {
        this.error('not-a-value', range, `\`${name}\` is a neighbour set: use it in \`sum n in ${name}: ...\`.`);
      } else this.unknown(name, range, this.valueNames(scope));
      return;
    }
    sym.used = true;
    switch (sym.kind) {
      case 'field':
      case 'let':
        if (scope.context === 'field-init' || scope.context === 'constant') {
          this.error('field-init-reads-field', range, `\`${name}\` is a ${sym.kind}; initial values and blur widths may use only numbers, params and constants.`);
        }
        scope.reads?.add(name);
        return;
      case 'param':
        return;
      case 'constant':
        if (scope.context === 'constant' && (name === 'x' || name === 'y' || name === 't')) {
          this.error('blur-sigma', range, `The blur width is one number for the whole grid and every step; it cannot depend on \`${name}\`.`);
        }
        return;
      case 'function':
      case 'diffusivity':
        this.error('not-a-value', range, `\`${name}\` is a function: call it, e.g. \`${name}(...)\`.`);
        return;
      case 'set':
        this.error('not-a-value', range, `\`${name}\` is a neighbour set: use it in \`sum n in ${name}: ...\`.`);
        return;
    }
  }

  private access(e: A.AccessExpr, scope: Scope): void {
    const sym = this.symbols.get(e.target);
    if (!sym || scope.fnArgs.has(e.target) || scope.reduceVars.has(e.target)) {
      if (!sym && !scope.fnArgs.has(e.target) && !scope.reduceVars.has(e.target)) {
        this.unknown(e.target, e.targetRange, this.valueNames(scope, ['field', 'let']), 'field');
      } else {
        this.error('offset-target', e.targetRange, `\`${e.target}\` is not a field or let field, so it has no neighbours or new value.`);
      }
    } else {
      sym.used = true;
      if (sym.kind !== 'field' && sym.kind !== 'let') {
        this.error('offset-target', e.targetRange, `\`${e.target}\` is a ${sym.kind}, not a field or let field, so it has no neighbours or new value.`);
        return;
      }
      if (scope.context === 'field-init' || scope.context === 'constant') {
        this.error('field-init-reads-field', e.range, `Initial values and blur widths cannot read fields; \`${e.target}\` is a ${sym.kind}.`);
      }
      scope.reads?.add(e.target);
      if (e.primed) {
        if (sym.kind !== 'field') {
          this.error('offset-target', e.targetRange, `\`${e.target}\` is a let field; only fields have a new value to prime.`);
        } else if (scope.context !== 'update') {
          this.error('prime-outside-update', e.range, `\`${e.target}'\` (a new value) can only be read inside an update.`);
        } else if (e.offset) {
          this.error('prime-offset', e.offset.range, `Only the same pixel's new value can be read: write \`${e.target}'\` without an offset.`);
        } else if (!scope.primes!.has(e.target)) scope.primes!.set(e.target, e.range);
      }
    }
    const off = e.offset;
    if (!off) return;
    if (off.kind === 'variable') {
      if (!scope.reduceVars.has(off.name)) {
        if (scope.fnArgs.has(off.name) || this.symbols.has(off.name)) {
          this.error('offset-not-integer', off.range, `\`${off.name}\` is not an offset: inside brackets write whole numbers (\`[1, 0]\`) or the variable of an enclosing \`sum n in S:\`.`);
        } else this.unknown(off.name, off.range, scope.reduceVars);
      }
      return;
    }
    this.literalOffset(off.components, off.range);
  }

  private reduce(e: A.ReduceExpr, scope: Scope): void {
    const offsets = this.setOffsets.get(e.set);
    const builtin = BUILTIN_SETS.get(e.set);
    const userSet = this.symbols.get(e.set);
    if (offsets) userSet!.used = true;
    else if (builtin) {
      if (builtin.dims !== this.dims) {
        this.error('set-dims', e.setRange, `\`${e.set}\` is a ${builtin.dims}d neighbour set; this grid is ${this.dims}d${this.dims === 1 ? ' (use `N2`)' : ' (use `N4` or `N8`)'}.`);
      }
    } else if (userSet) {
      userSet.used = true;
      if (userSet.kind !== 'set') this.error('unknown-set', e.setRange, `\`${e.set}\` is a ${userSet.kind}, not a neighbour set.`);
    } else {
      const candidates = [...this.setDecls.keys(), ...[...BUILTIN_SETS].filter(([, b]) => b.dims === this.dims).map(([n]) => n)];
      const suggestion = suggestName(e.set, candidates);
      this.error('unknown-set', e.setRange, `Unknown neighbour set \`${e.set}\`${suggestion ? `; did you mean \`${suggestion}\`?` : '; the built-in sets are N2 (1d), N4 and N8 (2d)'}.`, {
        data: suggestion ? { name: e.set, suggestion } : { name: e.set },
      });
    }
    if (this.symbols.has(e.variable) || scope.fnArgs.has(e.variable) || scope.reduceVars.has(e.variable)) {
      this.error('reduction-shadow', e.variableRange, `\`${e.variable}\` already names something; pick another letter for the offset variable.`);
    }
    const inner: Scope = { ...scope, reduceVars: new Set([...scope.reduceVars, e.variable]) };
    this.expr(e.body, inner);
  }

  private call(e: A.CallExpr, scope: Scope): void {
    const name = e.callee;
    if (name === 'blur') {
      this.error('blur-outside-let', e.calleeRange, '`blur` may only be the whole right-hand side of a `let`, e.g. `let w = blur(u, sigma)`.');
      for (const a of e.args) this.expr(a, scope);
      return;
    }
    if (name === 'len') {
      const a = e.args[0];
      if (e.args.length !== 1) this.error('wrong-arity', e.calleeRange, `\`len\` takes 1 argument; ${e.args.length} given.`);
      else if (!(a.kind === 'name' && scope.reduceVars.has(a.name))) {
        this.error('len-argument', a.range, '`len` gives the length of an offset variable, as in `len(n)` inside `sum n in S:`.');
      }
      return;
    }
    for (const a of e.args) this.expr(a, scope);
    const builtin = BUILTIN_FUNCTIONS.get(name);
    if (builtin) {
      if (!builtin.arity.includes(e.args.length)) {
        this.error('wrong-arity', e.calleeRange, `\`${name}\` takes ${builtin.arity.join(' or ')} argument${builtin.arity[0] === 1 ? '' : 's'}; ${e.args.length} given.`);
      }
      return;
    }
    const fn = this.fnDecls.get(name);
    if (fn) {
      this.symbols.get(name)!.used = true;
      scope.calls?.add(name);
      if ((scope.context === 'field-init' || scope.context === 'constant') && this.fnReadsFields.get(name)) {
        this.error('field-init-reads-field', e.calleeRange, `\`${name}\` reads fields or let fields, so it cannot be used in an initial value or a blur width.`);
      }
      if (fn.params.length !== e.args.length) {
        this.error('wrong-arity', e.calleeRange, `\`${name}\` takes ${fn.params.length} argument${fn.params.length === 1 ? '' : 's'}; ${e.args.length} given.`, {
          related: [{ range: fn.name.range, message: 'declared here' }],
        });
      }
      return;
    }
    const sym = this.symbols.get(name);
    if (sym) sym.used = true;
    if (sym || scope.fnArgs.has(name) || scope.reduceVars.has(name)) {
      this.error('unknown-function', e.calleeRange, `\`${name}\` is ${sym ? `a ${sym.kind}` : 'not a function'}; it cannot be called.`);
      return;
    }
    const candidates = [...this.fnDecls.keys(), ...BUILTIN_FUNCTIONS.keys(), 'blur', 'len'];
    this.unknown(name, e.calleeRange, candidates, 'function');
  }

  // ---------------------------------------------------------------- unused

  private reportUnused(): void {
    const warn = (code: CheckerCode, range: A.SourceRange, message: string, name: string, declRange: A.SourceRange): void => {
      this.report(code, 'warning', range, message, { data: { name, declRange } });
    };
    for (const [n, d] of this.paramDecls) if (!this.symbols.get(n)!.used) warn('unused-param', d.name.range, `The param \`${n}\` is never used.`, n, d.range);
    for (const [n, d] of this.fnDecls) if (!this.symbols.get(n)!.used) warn('unused-function', d.name.range, `The ${d.diffusivity ? 'diffusivity' : 'function'} \`${n}\` is never called.`, n, d.range);
    for (const [n, d] of this.letDecls) if (!this.symbols.get(n)!.used) warn('unused-let', d.name.range, `The let field \`${n}\` is never read.`, n, d.range);
    for (const [n, d] of this.setDecls) if (!this.symbols.get(n)!.used) warn('unused-set', d.name.range, `The neighbour set \`${n}\` is never used.`, n, d.range);
  }
}

/** Collects the fields an expression reads at the current level (bare names and accesses), for callers outside the checker. */
export function fieldsRead(e: A.Expr): Set<string> {
  const out = new Set<string>();
  walkExpr(e, (x) => {
    if (x.kind === 'name') out.add(x.name);
    else if (x.kind === 'access' && !x.primed) out.add(x.target);
  });
  return out;
}
