// The extension's declarative parts: snippets expand to schemes that check clean, the grammar's patterns compile
// and scope the right words, and the manifest's contributions follow our conventions (Fluxel category, fluxel.
// prefixes, bounded settings, untrusted workspaces supported, lazy activation, files that exist).

import { existsSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { ROOT, analyse } from './helpers';

const json = (p: string) => JSON.parse(readFileSync(join(ROOT, p), 'utf8'));
const pkg = json('package.json');
const snippets = json('syntaxes/fluxel.snippets.json') as Record<string, { prefix: string[]; body: string[]; description: string }>;

/** Expands a snippet body with every placeholder at its default (the first choice of a choice list). */
function expand(body: string[]): string {
  return body.join('\n')
    .replace(/\$\{\d+\|([^,|]*)[^}]*\|\}/g, '$1')
    .replace(/\$\{\d+:([^}]*)\}/g, '$1')
    .replace(/\$\d+/g, '');
}

describe('snippets', () => {
  it('cover heat, edge-preserving, TV flow, reaction–diffusion and wave, with our own prefixes', () => {
    expect(Object.values(snippets).flatMap((s) => s.prefix)).toEqual(['fx-heat', 'fx-edges', 'fx-tv', 'fx-react', 'fx-wave']);
    for (const s of Object.values(snippets)) expect(s.description.length).toBeGreaterThan(10);
  });

  it.each(Object.keys(snippets))('%s expands to a scheme that checks clean and is within the limit', (name) => {
    const a = analyse(expand(snippets[name].body));
    expect(a.diagnostics.filter((d) => d.severity !== 'info').map((d) => `${d.code}: ${d.message}`)).toEqual([]);
    expect(a.report?.stable).toBe(true);
  });
});

describe('grammar', () => {
  const grammar = json('syntaxes/fluxel.tmLanguage.json');
  const patterns: { match?: string; begin?: string; end?: string; name?: string }[] = [];
  const walk = (o: unknown): void => {
    if (Array.isArray(o)) o.forEach(walk);
    else if (o && typeof o === 'object') {
      const r = o as Record<string, unknown>;
      if (typeof r.match === 'string' || typeof r.begin === 'string') patterns.push(r as never);
      Object.values(r).forEach(walk);
    }
  };
  walk(grammar);

  it('has the scope name the manifest names and every pattern compiles', () => {
    expect(grammar.scopeName).toBe(pkg.contributes.grammars[0].scopeName);
    expect(patterns.length).toBeGreaterThan(20);
    for (const p of patterns) for (const re of [p.match, p.begin, p.end]) if (re) expect(() => new RegExp(re)).not.toThrow();
  });

  it('ends every scope with .fluxel', () => {
    const names = JSON.stringify(grammar).match(/"(?:name|contentName)": ?"[^"]+"/g) ?? [];
    for (const n of names) if (!n.includes('"Fluxel"')) expect(n).toMatch(/\.fluxel"$/);
  });

  it('scopes keywords, numbers, primes, offsets and comments', () => {
    const find = (name: string) => patterns.find((p) => p.name === name)!;
    expect(new RegExp(find('comment.line.number-sign.fluxel').match!).exec('x # note')![0]).toBe('# note');
    expect(new RegExp(find('constant.numeric.fluxel').match!).exec('dt = 2.5e-3')![0]).toBe('2.5e-3');
    expect(new RegExp(find('keyword.control.conditional.fluxel').match!).test('if a then b else c')).toBe(true);
    const update = new RegExp(grammar.repository.update.match).exec("u' = u");
    expect(update?.[1]).toBe('u');
  });

  it('scopes the input name and the channel of `image "NAME".CHANNEL`', () => {
    const p = patterns.find((x) => x.match?.startsWith('\\b(image)\\b'))!;
    const m = new RegExp(p.match!).exec('field g = image "guide".luma');
    expect([m?.[1], m?.[2], m?.[4]]).toEqual(['image', '"guide"', 'luma']);
    expect(new RegExp(p.match!).exec('field u = image')?.[0]).toBe('image');
  });
});

describe('manifest', () => {
  const c = pkg.contributes;

  it('activates lazily and supports untrusted workspaces', () => {
    expect(pkg.activationEvents).toContain('onLanguage:fluxel');
    for (const e of pkg.activationEvents) expect(e).toMatch(/^(onLanguage|onCommand|onWebviewPanel):fluxel/);
    expect(pkg.capabilities.untrustedWorkspaces.supported).toBe(true);
    expect(pkg.main).toBe('./dist/extension.js');
  });

  it('names every command fluxel.* in the Fluxel category, hidden outside schemes', () => {
    for (const cmd of c.commands) {
      expect(cmd.command).toMatch(/^fluxel\.[a-zA-Z]+$/);
      expect(cmd.category).toBe('Fluxel');
    }
    const hidden = new Set(c.menus.commandPalette.map((m: { command: string }) => m.command));
    expect(c.commands.filter((x: { command: string }) => !hidden.has(x.command)).map((x: { command: string }) => x.command)).toEqual(['fluxel.showLog']);
  });

  it('declares the four settings with defaults, bounds and descriptions', () => {
    expect(c.configuration.title).toBe('Fluxel');
    const props = c.configuration.properties;
    for (const key of ['fluxel.analysis.enabled', 'fluxel.analysis.debounceMs', 'fluxel.fixes.safetyFraction', 'fluxel.preview.maxImageSize']) {
      expect(props[key], key).toBeDefined();
      expect(props[key].default).not.toBeUndefined();
      expect(props[key].description ?? props[key].markdownDescription).toBeTruthy();
      if (props[key].type !== 'boolean') expect([props[key].minimum, props[key].maximum].every((v) => typeof v === 'number')).toBe(true);
    }
  });

  it('points at files that exist', () => {
    for (const p of [c.languages[0].configuration, c.grammars[0].path, c.snippets[0].path]) expect(existsSync(join(ROOT, p)), p).toBe(true);
    const lc = json(c.languages[0].configuration);
    expect(lc.comments.lineComment).toBe('#');
  });

  it('keeps sources, tests and benchmarks out of the package', () => {
    const ignore = readFileSync(join(ROOT, '.vscodeignore'), 'utf8').split('\n').filter((l) => l && !l.startsWith('#'));
    expect(ignore[0]).toBe('**');
    expect(ignore.filter((l) => l.startsWith('!')).some((l) => /src|test|bench|node_modules/.test(l))).toBe(false);
  });
});
