// Checker tests as data: each invalid input gives exactly these codes at exactly these ranges
// (`line:col-line:col`, 1-based, end exclusive). Every checker rule has at least one case.

import { describe, expect, it } from 'vitest';
import { parseAndCheck } from '../../../src/notation';
import { CODES } from '../../../src/notation/diagnostics';
import { printRange } from './printAst';

/** Four valid lines that every case below starts with, so settings errors do not drown the one under test. */
const PRE = 'grid 2d\nstep dt = 0.1\nsteps 5\nfield u = image\n';

function diags(src: string, severity?: string): string[] {
  return parseAndCheck(src)
    .diagnostics.filter((d) => !severity || d.severity === severity)
    .map((d) => `${d.code} ${printRange(d.range)}`);
}

/** [name, source, expected "code range" lines]. Sources that start with PRE have their own lines from line 5. */
export const CASES: [string, string, string[]][] = [
  ['unknown name with suggestion', PRE + "u' = u + dt * sum n in N4: u[n] - uu", ['unknown-name 5:35-5:37']],
  ['unknown function', PRE + "u' = sqr(u)", ['unknown-name 5:6-5:9']],
  ['calling a param', PRE + "param K = 1\nu' = K(u)", ['unknown-function 6:6-6:7']],
  ['unknown set', PRE + "u' = sum n in N5: u[n]", ['unknown-set 5:15-5:17']],
  ['2d set on a 1d grid', "grid 1d\nstep dt = 0.1\nsteps 5\nfield u = image\nu' = sum n in N4: u[n]", ['set-dims 5:15-5:17']],
  ['redefinition of a param', PRE + "param K = 1\nparam K = 2\nu' = u * K", ['redefinition 6:7-6:8']],
  ['redefining a built-in constant', PRE + "param pi = 3\nu' = u", ['redefinition 5:7-5:9']],
  ['redefining a built-in function', PRE + "fn abs(a) = a\nu' = u", ['redefinition 5:4-5:7']],
  ['wrong arity of a built-in', PRE + "u' = abs(u, 1)", ['wrong-arity 5:6-5:9']],
  ['wrong arity of a user function', PRE + "fn f(a, b) = a * b\nu' = f(u)", ['wrong-arity 6:6-6:7']],
  ['offset with too few components', PRE + "u' = u[1]", ['offset-dims 5:7-5:10']],
  ['offset with too many components (1d)', "grid 1d\nstep dt = 0.1\nsteps 5\nfield u = image\nu' = u[1, 0]", ['offset-dims 5:7-5:13']],
  ['offset beyond 8', PRE + "u' = u[9, 0]", ['offset-too-large 5:8-5:9']],
  ['offset not an integer', PRE + "u' = u[0.5, 0]", ['offset-not-integer 5:8-5:11']],
  ['offset from a param', PRE + "param K = 1\nu' = u[K] * K", ['offset-not-integer 6:7-6:10']],
  ['brackets on a param', PRE + "param K = 1\nu' = K[1, 0]", ['offset-target 6:6-6:7']],
  ['update of an undeclared field', PRE + "q' = u", ['no-updates 1:1-1:8', 'update-unknown-field 5:1-5:2']],
  ['update of a param', PRE + "param K = 1\nK' = u\nu' = u", ['unused-param 5:7-5:8', 'update-unknown-field 6:1-6:2']],
  ['two updates of one field', PRE + "u' = u\nu' = 2 * u", ['duplicate-update 6:1-6:2']],
  ['prime cycle', PRE + "field v = 0\nu' = v'\nv' = u'", ['prime-cycle 7:6-7:8']],
  ['reading its own new value', PRE + "u' = u' + 1", ['prime-cycle 5:6-5:8']],
  ['prime of a field without update', PRE + "field v = 0\nu' = v'", ['prime-unknown 6:6-6:8']],
  ['prime with an offset', PRE + "field v = 0\nv' = v\nu' = v'[1, 0]", ['prime-offset 7:8-7:14']],
  ['prime outside an update', PRE + "field v = 0\nv' = v\nlet w = v'\nu' = w", ['prime-outside-update 7:9-7:11']],
  ['param default outside its range', PRE + "param K = 5 in [0, 1]\nu' = K * u", ['param-out-of-range 5:11-5:12']],
  ['empty param range', PRE + "param K = 5 in [3, 1]\nu' = K * u", ['param-range-empty 5:16-5:22']],
  ['dt zero', "grid 2d\nstep dt = 0\nsteps 5\nfield u = image\nu' = u", ['step-not-positive 2:11-2:12']],
  ['dt negative', "grid 2d\nstep dt = -0.1\nsteps 5\nfield u = image\nu' = u", ['step-not-positive 2:11-2:15']],
  ['dt outside its slider range', "grid 2d\nstep dt = 2 in [0.1, 1]\nsteps 5\nfield u = image\nu' = u", ['step-out-of-range 2:11-2:12']],
  ['step not named dt', "grid 2d\nstep tau = 0.1\nsteps 5\nfield u = image\nu' = u", ['step-name 2:6-2:9']],
  ['non-integer steps', "grid 2d\nstep dt = 0.1\nsteps 2.5\nfield u = image\nu' = u", ['steps-invalid 3:7-3:10']],
  ['negative steps', "grid 2d\nstep dt = 0.1\nsteps -3\nfield u = image\nu' = u", ['steps-invalid 3:7-3:9']],
  ['until on another variable', "grid 2d\nstep dt = 0.1\nuntil s = 3\nfield u = image\nu' = u", ['until-invalid 3:7-3:8']],
  ['until not a whole number of steps', "grid 2d\nstep dt = 0.3\nuntil t = 1\nfield u = image\nu' = u", ['until-not-multiple 3:11-3:12']],
  ['missing steps', "grid 2d\nstep dt = 0.1\nfield u = image\nu' = u", ['missing-steps 1:1-1:8']],
  ['missing step', "grid 2d\nsteps 3\nfield u = image\nu' = u", ['missing-step 1:1-1:8']],
  ['missing grid', "step dt = 0.1\nsteps 3\nfield u = image\nu' = u", ['missing-grid 1:1-1:14']],
  ['3d grid', "grid 3d\nstep dt = 0.1\nsteps 3\nfield u = image\nu' = u", ['bad-grid 1:6-1:8']],
  ['grid declared twice', "grid 2d\ngrid 2d\nstep dt = 0.1\nsteps 3\nfield u = image\nu' = u", ['duplicate-declaration 2:1-2:8']],
  ['spacing zero', PRE + "spacing 0\nu' = u", ['spacing-not-positive 5:9-5:10']],
  ['blur outside a let', PRE + "u' = blur(u, 1)", ['blur-outside-let 5:6-5:10']],
  ['blur inside a let expression', PRE + "let w = 2 * blur(u, 1)\nu' = w", ['blur-outside-let 5:13-5:17']],
  ['blur of a param', PRE + "param K = 1\nlet w = blur(K, 1)\nu' = w", ['blur-source 6:14-6:15']],
  ['blur width reading a field', PRE + "let w = blur(u, u)\nu' = w", ['field-init-reads-field 5:17-5:18']],
  ['diffusivity of two arguments', PRE + "diffusivity g(a, b) = a * b\nu' = g(u, u)", ['diffusivity-arity 5:13-5:14']],
  ['direct recursion', PRE + "fn f(a) = f(a) + 1\nu' = f(u)", ['recursion 5:4-5:5']],
  ['mutual recursion', PRE + "fn f(a) = g(a)\nfn g(a) = f(a)\nu' = f(u)", ['recursion 5:4-5:5', 'recursion 6:4-6:5']],
  ['let cycle', PRE + "let a = b + 1\nlet b = a + 1\nu' = a", ['let-cycle 6:5-6:6']],
  ['field without initial value', PRE + "field v\nu' = u + v", ['field-uninitialised 5:7-5:8']],
  ['field initial value reads a field', PRE + "field v = u * 2\nu' = u + v", ['field-init-reads-field 5:11-5:12']],
  ['no fields at all', "grid 2d\nstep dt = 0.1\nsteps 3", ['no-fields 1:1-1:8']],
  ['no updates', "grid 2d\nstep dt = 0.1\nsteps 3\nfield u = image", ['no-updates 1:1-1:8']],
  ['empty neighbour set', PRE + "neighbours e = {}\nu' = sum n in e: u[n]", ['set-empty 5:12-5:13']],
  ['set offset with the wrong dimension', PRE + "neighbours e = {[1]}\nu' = sum n in e: u[n]", ['offset-dims 5:17-5:20']],
  ['per-field boundary of an unknown field', PRE + "boundary q periodic\nu' = u", ['boundary-unknown-field 5:10-5:11']],
  ['per-field boundary of an unknown field (suggestion)', PRE + "boundary uu periodic\nu' = u", ['boundary-unknown-field 5:10-5:12']],
  ['reduction variable hides a field', PRE + "u' = sum u in N4: 1", ['reduction-shadow 5:10-5:11']],
  ['reduction variable used as a value', PRE + "u' = sum n in N4: n", ['not-a-value 5:19-5:20']],
  ['function used as a value', PRE + "fn f(a) = a\nu' = f + u", ['not-a-value 6:6-6:7']],
  ['len of a non-variable', PRE + "u' = len(u)", ['len-argument 5:10-5:11']],
  ['comparison chain', PRE + "u' = if 0 < u < 1 then u else 0", ['comparison-chain 5:15-5:16']],
  ['unused param', PRE + "param K = 1\nu' = u", ['unused-param 5:7-5:8']],
  ['unused function', PRE + "fn f(a) = a\nu' = u", ['unused-function 5:4-5:5']],
  ['unused diffusivity', PRE + "diffusivity g(s) = 1\nu' = u", ['unused-function 5:13-5:14']],
  ['unused let', PRE + "let w = u * 2\nu' = u", ['unused-let 5:5-5:6']],
  ['unused set', PRE + "neighbours e = {[1, 0]}\nu' = u", ['unused-set 5:12-5:13']],
  ['lexer error', PRE + "u' = u @ 2", ['lex-error 5:8-5:9', 'syntax-error 5:10-5:11']],
  ['syntax error', PRE + "u' = u + )", ['syntax-error 5:10-5:11']],
];

describe('checker: codes and exact ranges', () => {
  for (const [name, src, want] of CASES) {
    it(name, () => expect(diags(src)).toEqual(want));
  }

  it('covers every code of the catalogue', () => {
    const seen = new Set(CASES.flatMap(([, , want]) => want.map((w) => w.split(' ')[0])));
    const missing = Object.keys(CODES).filter((c) => !seen.has(c));
    expect(missing, 'codes without a test case').toEqual([]);
  });
});

describe('checker: meaning', () => {
  it('suggests the close name and carries it for the quick fix', () => {
    const d = parseAndCheck(PRE + "param sigma = 1\nu' = u * sigmaa").diagnostics.find((x) => x.code === 'unknown-name')!;
    expect(d.message).toContain('did you mean `sigma`');
    expect(d.data).toEqual({ name: 'sigmaa', suggestion: 'sigma' });
  });

  it('orders updates by primed reads, whatever the source order', () => {
    const r = parseAndCheck("grid 2d\nstep dt = 0.1\nsteps 5\nfield u = 0\nfield v = 0\nu' = u + dt * v'\nv' = v + dt * (sum n in N4: u[n] - u)");
    expect(r.diagnostics).toEqual([]);
    expect(r.scheme!.updates.map((u) => u.field)).toEqual(['v', 'u']);
    expect(r.scheme!.updates[1].readsPrimed).toEqual(['v']);
  });

  it('orders lets by their reads', () => {
    const r = parseAndCheck(PRE + "let b = a * 2\nlet a = u + 1\nu' = b");
    expect(r.diagnostics).toEqual([]);
    expect(r.scheme!.lets.map((l) => l.name)).toEqual(['a', 'b']);
  });

  it('resolves boundaries per field with the default for the rest', () => {
    const r = parseAndCheck("grid 2d\nboundary fixed 0.25\nboundary v periodic\nstep dt = 0.1\nsteps 5\nfield u = image\nfield v = 0\nu' = u + v\nv' = v");
    expect(r.diagnostics).toEqual([]);
    expect(r.scheme!.fields.map((f) => [f.name, f.boundary])).toEqual([
      ['u', { kind: 'fixed', value: 0.25 }],
      ['v', { kind: 'periodic' }],
    ]);
  });

  it('turns `until t = T` into round(T / dt) steps', () => {
    const r = parseAndCheck("grid 2d\nstep dt = 0.2\nuntil t = 12\nfield u = image\nu' = u");
    expect(r.scheme!.steps).toBe(60);
    expect(r.scheme!.untilTime).toBe(12);
  });

  it('marks fields without an update as constant', () => {
    const r = parseAndCheck(PRE + "field f = image\nu' = u + dt * (f - u)");
    expect(r.scheme!.fields.map((f) => [f.name, f.updated])).toEqual([['u', true], ['f', false]]);
  });

  it('gives no scheme while errors remain, and one once they are fixed', () => {
    expect(parseAndCheck(PRE + "u' = uu").scheme).toBeNull();
    expect(parseAndCheck(PRE + "u' = u").scheme).not.toBeNull();
  });
});
