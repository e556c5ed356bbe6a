// The live run page: strict content security policy with a fresh nonce, local resources only, and escaping of
// everything that comes from the workspace (the file name and URI).

import { describe, expect, it } from 'vitest';
import { escapeHtml, liveRunHtml, liveRunPolicy, makeNonce } from '../../../src/extension/preview/previewHtml';

const opts = { cspSource: 'https://res.example', nonce: 'abc123', scriptUri: 'https://res.example/p.js', styleUri: 'https://res.example/p.css', source: 'file:///w/a.fluxel', fileName: 'a.fluxel' };

describe('live run page', () => {
  it('allows nothing by default, scripts only with the nonce, and no inline styles', () => {
    const p = liveRunPolicy('https://res.example', 'N1');
    expect(p).toContain("default-src 'none'");
    expect(p).toContain("script-src 'nonce-N1'");
    expect(p).toContain('style-src https://res.example');
    expect(p).not.toMatch(/unsafe-(inline|eval)/);
    expect(p).not.toContain('connect-src');
    expect(p).not.toContain('worker-src');
  });

  it('puts the policy first in the head and the nonce on the only script', () => {
    const html = liveRunHtml(opts);
    expect(html.indexOf('Content-Security-Policy')).toBeLessThan(html.indexOf('<link'));
    expect(html.match(/<script/g)?.length).toBe(1);
    expect(html).toContain('<script nonce="abc123" src="https://res.example/p.js">');
    expect(html).not.toMatch(/http:\/\/|<style/);
  });

  it('escapes names from the workspace', () => {
    const html = liveRunHtml({ ...opts, fileName: '"><script>alert(1)</script>.fluxel', source: "file:///w/it's.fluxel" });
    expect(html).not.toContain('<script>alert');
    expect(html).toContain('&quot;&gt;&lt;script&gt;');
    expect(html).toContain('data-source="file:///w/it&#39;s.fluxel"');
    expect(escapeHtml('&<>"\'')).toBe('&amp;&lt;&gt;&quot;&#39;');
  });

  it('makes a different nonce each time from 18 random bytes', () => {
    const a = makeNonce();
    expect(a).not.toBe(makeNonce());
    expect(Buffer.from(a, 'base64').length).toBe(18);
  });
});
