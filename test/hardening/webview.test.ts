// Campaign "webview": every message from the live run page is validated; what fails is dropped and logged.
// - validateFromPreview on generated values (fast-check: arbitrary JSON, valid messages with one field broken, extra
//   and prototype-polluting keys, huge strings, NaN and non-integers): never throws, returns null or a message that
//   carries only the known fields of a known type and validates again to itself.
// - The real panel (previewPanel.ts on the vscode stand-in) drops invalid messages and messages naming another
//   document without acting on them, and logs each drop.
// - The page's content security policy, read from the HTML the panel really sets: nothing by default, scripts only
//   with this render's nonce (no 'unsafe-inline', no 'unsafe-eval', no hosts), every other source the webview's own
//   resource origin or blob:/data: images, no remote origin anywhere; every script tag carries the nonce.
// CSP semantics: W3C, "Content Security Policy Level 3" (Working Draft), sections 6.1 (fetch directives) and 6.7.2
// (nonce source matching); the webview rules: VS Code extension guide "Webview API", section "Security".

import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import * as vscode from 'vscode';
import { validateFromPreview } from '../../src/protocol/preview';
import { AnalysisClient } from '../../src/extension/preview/analysisClient';
import { LiveRunPanel } from '../../src/extension/preview/previewPanel';
import { campaignSeed, report, scaled } from './campaign';
import { FakeDocument, FakePanel, Memento, appliedEdits, documents, settings } from './fakeVscode';

const SOURCE = 'file:///w/page.fluxel';
const VALID: Record<string, unknown>[] = [
  { type: 'ready' }, { type: 'chooseImage' }, { type: 'rerun' },
  { type: 'setKnobs', values: { K: 0.1 }, dt: 0.1 }, { type: 'writeKnobs', values: { K: 0.1, s: 2 }, dt: 0.2 },
  { type: 'setInput', input: { kind: 'scene', scene: 'survey', noise: 0.1, seed: 7 } }, { type: 'setInput', input: { kind: 'file', uri: 'file:///w/a.png' } },
  { type: 'showField', field: 'u' }, { type: 'pickPixel', runId: 1, step: 2, x: 3, y: 4 }, { type: 'requestProfile', runId: 1, step: 2, row: 3 },
  { type: 'reveal', range: { start: { line: 1, column: 1 }, end: { line: 2, column: 3 } } }, { type: 'fitKnobs' }, { type: 'fitKnobs', names: ['K'] },
].map((m) => ({ ...m, source: SOURCE }));
const FIELDS: Record<string, string[]> = {
  ready: [], chooseImage: [], rerun: [], setKnobs: ['values', 'dt'], writeKnobs: ['values', 'dt'], setInput: ['input'], showField: ['field'],
  pickPixel: ['runId', 'step', 'x', 'y'], requestProfile: ['runId', 'step', 'row'], reveal: ['range'], fitKnobs: ['names'],
};
const BAD_VALUES: unknown[] = [null, undefined, NaN, Infinity, -1, 1.5, 2 ** 53, '', 'x'.repeat(200_000), '__proto__', [], {}, { __proto__: { polluted: true } },
  JSON.parse('{"__proto__": {"polluted": true}}'), true, -0, '1', ['K'], { K: 'a' }, { 'K K': 1 }, { constructor: 1 }];

/** A valid message with one field replaced, removed or added. */
const broken = fc.tuple(fc.constantFrom(...VALID), fc.constantFrom(...BAD_VALUES), fc.nat({ max: 4 }), fc.string({ maxLength: 12 })).map(([m, bad, how, key]) => {
  const keys = Object.keys(m);
  const k = keys[Math.floor((how / 5) * keys.length)] ?? 'type';
  const copy: Record<string, unknown> = { ...m };
  if (how === 0) delete copy[k];
  else if (how === 4) copy[key || 'extra'] = bad;
  else copy[k] = bad;
  return copy;
});

function wellFormed(v: NonNullable<ReturnType<typeof validateFromPreview>>): string | null {
  const known = FIELDS[v.type];
  if (!known) return `unknown type ${v.type}`;
  const extra = Object.keys(v).filter((k) => k !== 'type' && k !== 'source' && !known.includes(k));
  if (extra.length) return `extra keys ${extra.join(', ')}`;
  if (Object.getPrototypeOf(v) !== Object.prototype) return 'odd prototype';
  const again = validateFromPreview(JSON.parse(JSON.stringify(v)));
  if (JSON.stringify(again) !== JSON.stringify(v)) return 'does not validate to itself';
  return null;
}

describe('campaign webview', () => {
  it('validateFromPreview never throws and lets through only known, clean messages', () => {
    let cases = 0, accepted = 0;
    const failures: string[] = [];
    const check = (raw: unknown) => {
      cases++;
      let v;
      try { v = validateFromPreview(raw); } catch (e) { failures.push(`threw ${String(e)} on ${String(JSON.stringify(raw)).slice(0, 200)}`); return; }
      if (v === null) return;
      accepted++;
      const p = wellFormed(v);
      if (p) failures.push(`${p}: ${JSON.stringify(raw).slice(0, 200)}`);
    };
    for (const m of VALID) check(m);
    const seed = campaignSeed(20261208);
    fc.assert(fc.property(fc.anything({ withNullPrototype: true, withBigInt: true, withDate: true, withMap: true, withSet: true, withTypedArray: true, withSparseArray: true }), (raw) => { check(raw); }), { numRuns: scaled(5000), seed });
    fc.assert(fc.property(fc.record({ type: fc.constantFrom(...Object.keys(FIELDS), 'other', ''), source: fc.oneof(fc.constant(SOURCE), fc.string()) }, { requiredKeys: [] }), (raw) => { check(raw); }), { numRuns: scaled(2000), seed: seed + 1 });
    fc.assert(fc.property(broken, (raw) => { check(raw); }), { numRuns: scaled(5000), seed: seed + 2 });
    expect(({} as Record<string, unknown>).polluted).toBeUndefined();
    report('webview-validation', cases, failures.length, `${accepted} accepted, ${cases - accepted} dropped`);
    expect(failures.slice(0, 10)).toEqual([]);
    expect(accepted).toBeGreaterThan(VALID.length);
  });

  it('the panel drops and logs invalid messages and messages for another document, and acts on none of them', async () => {
    const analysis = new AnalysisClient();
    try {
      const uri = vscode.Uri.parse(SOURCE);
      documents.set(uri.toString(), new FakeDocument(uri, 'grid 2d\nstep dt = 0.1\nsteps 2\nfield u = image\nparam K = 0.2 in [0, 1]\nu\' = u + dt * K * sum n in N4: u[n] - u\n'));
      settings.set('fluxel.liveRun.sceneSize', 16);
      const panel = new FakePanel();
      const logs: string[] = [];
      const live = new LiveRunPanel(panel as never, uri as never, { extensionUri: vscode.Uri.parse('file:///ext') as never, memory: new Memento() as never, analysis: () => analysis, log: (l) => logs.push(l) });
      const session = await live.sessionReady();
      const handled: unknown[] = [];
      const handle = session!.handle.bind(session);
      session!.handle = async (m) => { handled.push(m); return handle(m); };
      appliedEdits.length = 0;
      const hostile: unknown[] = [
        null, 42, 'ready', { type: 'ready' }, { type: 'writeKnobs', source: SOURCE, values: { K: 'drop table' }, dt: 0.1 },
        { type: 'writeKnobs', source: 'file:///w/other.fluxel', values: { K: 0.5 }, dt: 0.1 }, { type: 'reveal', source: SOURCE, range: { start: { line: 0, column: 1 }, end: { line: 1, column: 1 } } },
        { type: 'setInput', source: SOURCE, input: { kind: 'file', uri: '' } }, { type: 'eval', source: SOURCE, code: 'process.exit()' },
        JSON.parse('{"type":"setKnobs","source":"file:///w/page.fluxel","values":{"__proto__":{"x":1}},"dt":0.1}'),
        { type: 'pickPixel', source: SOURCE, runId: -1, step: 0, x: 0, y: 0 }, { type: 'showField', source: SOURCE, field: 'u; rm -rf /' },
      ];
      for (const m of hostile) panel.send(m);
      panel.send({ type: 'rerun', source: SOURCE }); // one valid message, which must reach the session
      await new Promise((r) => setTimeout(r, 300));
      const drops = logs.filter((l) => l.startsWith('live run: dropped a message'));
      live.dispose();
      const failures = (drops.length !== hostile.length ? 1 : 0) + (handled.length !== 1 ? 1 : 0) + (appliedEdits.length !== 0 ? 1 : 0);
      report('webview-panel', hostile.length + 1, failures, `${drops.length} dropped and logged, ${handled.length} handled, ${appliedEdits.length} edits`);
      expect(drops.length).toBe(hostile.length);
      expect(drops.some((l) => l.includes('names another document'))).toBe(true);
      expect(handled).toEqual([{ type: 'rerun', source: SOURCE }]);
      expect(appliedEdits).toEqual([]);
    } finally {
      analysis.dispose();
    }
  });

  it('the rendered policy allows scripts only with the nonce and loads nothing remote', () => {
    const uri = vscode.Uri.parse('file:///w/"><img src=x onerror=alert(1)>.fluxel');
    documents.set(uri.toString(), new FakeDocument(uri, 'grid 2d\n'));
    const pages: string[] = [];
    const failures: string[] = [];
    for (let k = 0; k < 20; k++) {
      const panel = new FakePanel();
      const live = new LiveRunPanel(panel as never, uri as never, { extensionUri: vscode.Uri.parse('file:///ext') as never, memory: new Memento() as never, analysis: () => { throw new Error('not needed'); }, log: () => undefined });
      pages.push(panel.webview.html);
      live.dispose();
    }
    const nonces = new Set<string>();
    for (const html of pages) {
      const meta = /<meta http-equiv="Content-Security-Policy" content="([^"]*)">/.exec(html);
      if (!meta) { failures.push('no policy'); continue; }
      const policy = meta[1].replace(/&#39;/g, "'").replace(/&amp;/g, '&');
      const directives = new Map(policy.split(';').map((d) => d.trim().split(/\s+/)).map(([name, ...src]) => [name, src]));
      const scriptSrc = directives.get('script-src') ?? [];
      const nonce = /^'nonce-([A-Za-z0-9+/=]+)'$/.exec(scriptSrc[0] ?? '')?.[1];
      if (directives.get('default-src')?.join(' ') !== "'none'") failures.push(`default-src ${directives.get('default-src')}`);
      if (scriptSrc.length !== 1 || !nonce) failures.push(`script-src ${scriptSrc.join(' ')}`);
      if (nonce) nonces.add(nonce);
      const own = 'https://file+.vscode-resource.vscode-cdn.net';
      for (const [name, src] of directives) {
        for (const s of src) {
          const ok = s === "'none'" || s === own || (name === 'script-src' && s === `'nonce-${nonce}'`) || (name === 'img-src' && (s === 'blob:' || s === 'data:'));
          if (!ok) failures.push(`${name} allows ${s}`);
        }
      }
      if (/unsafe-inline|unsafe-eval|\*/.test(policy)) failures.push(`policy has a wildcard or unsafe keyword: ${policy}`);
      const scripts = [...html.matchAll(/<script\b([^>]*)>/g)];
      if (scripts.length === 0 || scripts.some((m) => !m[1].includes(`nonce="${nonce}"`))) failures.push('a script without the nonce');
      // Attributes of real tags only (escaped text such as the file name in the title holds no '<'): no on* handlers.
      for (const tag of html.matchAll(/<([a-z]+)((?:\s+[a-z-]+(?:="[^"]*")?)*)\s*\/?>/gi)) {
        for (const attr of tag[2].matchAll(/\s+([a-z-]+)(?:="[^"]*")?/gi)) {
          if (/^on/i.test(attr[1])) failures.push(`an inline event handler ${attr[1]} on <${tag[1]}>`);
        }
      }
      if (/<img src=x/.test(html)) failures.push('the file name reached the page unescaped');
    }
    if (nonces.size !== pages.length) failures.push(`${nonces.size} distinct nonces over ${pages.length} renders`);
    report('webview-policy', pages.length, failures.length, `${nonces.size} distinct nonces`);
    expect(failures).toEqual([]);
  });
});
