// Browser-side answers for the live run's real-editor tests (test/editor/preview.ts), called by the driver
// (editor-test.mjs) for probes of kind "liverun": it finds the live run's page inside the webview frames, reads its
// data attributes and canvas pixels, moves a knob, clicks a finding, and takes screenshots. Conditions are polled
// under a generous hang guard; nothing here asserts, the suite does.
import { join } from 'node:path';
import { PNG } from 'pngjs';

const GUARD_MS = 60000;

async function pollFor(page, what, fn) {
  const t0 = Date.now();
  for (;;) {
    const v = await fn().catch(() => null);
    if (v) return v;
    if (Date.now() - t0 > GUARD_MS) throw new Error(`gave up waiting for ${what}`);
    await page.waitForTimeout(100);
  }
}

/** The frame that holds the live run page (the inner document of the webview with the picture canvas). */
async function liveRunFrame(page) {
  return pollFor(page, 'the live run page', async () => {
    for (const f of page.frames()) {
      const ok = await f.evaluate(() => Boolean(document.body && document.body.dataset.source && document.querySelector('canvas.picture'))).catch(() => false);
      if (ok) return f;
    }
    return null;
  });
}

const facts = (f) => f.evaluate(() => ({ ...document.body.dataset }));

/** Pixel statistics of the picture canvas: distinct colours (sampled) and the fraction of non-background pixels. */
const canvasPixels = (f) => f.evaluate(() => {
  const c = document.querySelector('canvas.picture');
  const ctx = c.getContext('2d');
  const { data } = ctx.getImageData(0, 0, c.width, c.height);
  const colours = new Set();
  let painted = 0;
  for (let i = 0; i < data.length; i += 4) {
    if (data[i + 3] > 0) painted++;
    if (i % 12 === 0) colours.add((data[i] << 16) | (data[i + 1] << 8) | data[i + 2]);
  }
  return { width: c.width, height: c.height, colours: colours.size, painted: painted / (data.length / 4), data: Array.from(data.filter((_, i) => i % 4 !== 3 && i % 16 < 4)) };
});

function pngStats(buf) {
  const png = PNG.sync.read(buf);
  const colours = new Set();
  for (let i = 0; i < png.data.length; i += 4 * 5) colours.add((png.data[i] << 16) | (png.data[i + 1] << 8) | png.data[i + 2]);
  return { width: png.width, height: png.height, colours: colours.size };
}

/** A screenshot of the live run panel (the last ready webview) saved at `path`, with its size and colour count. */
async function panelShot(page, path) {
  const box = await page.locator('iframe.webview.ready').last().boundingBox();
  const buf = await page.screenshot({ path, ...(box ? { clip: box } : {}) });
  return { path, ...pngStats(buf) };
}

export async function liveRunProbe(page, extra, outDir) {
  const req = JSON.parse(extra || '{}');
  const f = await liveRunFrame(page);
  switch (req.action) {
    case 'state': {
      // Wait for a finished run (or at least `minFrames` frames), then compare the picture now with the start view.
      // The pictures must come from one steady run: if the page re-received its frames (a replay after it was shown
      // again) or a new run began while they were read, read them again (at most three times).
      for (let attempt = 1; ; attempt++) {
        const d = await pollFor(page, `a run with ${req.minFrames ?? 2} frames`, async () => {
          const x = await facts(f);
          return Number(x.frames) >= (req.minFrames ?? 2) && (!req.done || x.status === 'done') ? x : null;
        });
        const picture = f.locator('canvas.picture');
        await picture.press('n');
        const now = await canvasPixels(f);
        const mid = await facts(f);
        await picture.press('s');
        await pollFor(page, 'the start view', async () => (await facts(f)).view === 'start');
        const start = await canvasPixels(f);
        await picture.press('c');
        const change = await canvasPixels(f);
        await picture.press('n');
        const after = await facts(f);
        const steady = [mid, after].every((x) => x.step === d.step && x.frames === d.frames && x.status === d.status);
        if (!steady && attempt < 3) continue;
        let diff = 0;
        for (let i = 0; i < Math.min(now.data.length, start.data.length); i++) diff += Math.abs(now.data[i] - start.data[i]);
        return {
          ...d, canvas: { width: now.width, height: now.height }, nowColours: now.colours, startColours: start.colours, changeColours: change.colours,
          painted: now.painted, meanAbsDiff: diff / Math.max(1, now.data.length), attempts: attempt, steady,
          during: `step ${mid.step}/${after.step}, frames ${mid.frames}/${after.frames}, status ${mid.status}/${after.status}`,
        };
      }
    }
    case 'knob': {
      const before = await facts(f);
      await f.locator(`#knob-${req.name}`).fill(String(req.position));
      const after = await pollFor(page, 'a new run after the knob moved', async () => {
        const x = await facts(f);
        return x.runId !== before.runId && Number(x.frames) >= 2 ? x : null;
      });
      const px = await canvasPixels(f);
      return { before, after, colours: px.colours };
    }
    case 'derivative': {
      // Chooses "∂/∂NAME" in the derivative chooser (or "none (values)" for an empty name) and waits for the finished rerun
      // whose shown frame is that derivative; returns the canvas' colours.
      const before = await facts(f);
      await f.locator('#derivative').selectOption(req.name ? req.name : { index: 0 });
      const after = await pollFor(page, `a finished run showing ${req.name ? `∂/∂${req.name}` : 'the values'}`, async () => {
        const x = await facts(f);
        return x.runId !== before.runId && x.status === 'done' && x.derivative === req.name ? x : null;
      });
      const px = await canvasPixels(f);
      const label = await f.locator('canvas.picture').getAttribute('aria-label');
      return { before, after, colours: px.colours, painted: px.painted, label };
    }
    case 'finding': {
      await pollFor(page, 'a finding', async () => Number((await facts(f)).findings) > 0);
      const button = f.locator('button.finding').first();
      const text = await button.innerText();
      await button.click();
      const d = await pollFor(page, 'the weights of the finding pixel', async () => {
        const x = await facts(f);
        return x.weights ? x : null;
      });
      return { text, ...d };
    }
    case 'click': {
      // A button of the page by (part of) its text.
      const button = f.locator('button', { hasText: req.text }).first();
      await button.click();
      return { clicked: await button.innerText(), ...(await facts(f)) };
    }
    case 'fit': {
      // Clicks "fit knobs" and waits for the fit to finish (done or failed) and for the rerun it starts.
      const before = await facts(f);
      await f.locator('button', { hasText: 'fit knobs' }).first().click();
      const d = await pollFor(page, 'the knob fit to finish', async () => {
        const x = await facts(f);
        return x.fit === 'done' || x.fit === 'failed' ? x : null;
      });
      // The page's knobs then hold the fitted values (the host moved them and reran).
      const after = d.fit === 'done' ? await pollFor(page, 'the knobs at the fitted values', async () => {
        const x = await facts(f);
        const found = JSON.parse(x.fitValues || '{}');
        const knobs = JSON.parse(x.knobs || '{}');
        return Object.keys(found).length > 0 && Object.entries(found).every(([k, v]) => knobs[k] === v) ? x : null;
      }) : d;
      return { ...after, before: before.runId, line: await f.locator('.fit-status').innerText() };
    }
    case 'notification': {
      // A button of a workbench notification (outside the webview) by its text.
      const find = async () => {
        const b = page.locator('.notifications-toasts .monaco-button, .notifications-center .monaco-button', { hasText: req.text }).first();
        return (await b.count()) > 0 && (await b.isVisible()) ? b : null;
      };
      let button = null;
      try {
        button = await pollFor(page, `a notification with "${req.text}"`, find);
      } catch (err) {
        await page.screenshot({ path: join(outDir, 'probe-failed-notification.png') }).catch(() => {});
        const texts = await page.locator('.notification-list-item').allInnerTexts().catch(() => []);
        throw new Error(`${err.message}; notifications: ${JSON.stringify(texts)}`);
      }
      const message = await page.locator('.notification-list-item-message', { hasText: 'Fit' }).first().innerText().catch(() => '');
      await button.click();
      return { clicked: req.text, message };
    }
    case 'problems': {
      // The page marks itself stale and shows the first error; clicking it reveals the error in the editor.
      await pollFor(page, 'the stale mark and the first error', () => f.evaluate(() => document.body.classList.contains('stale') && !document.querySelector('.problems').hidden));
      const link = f.locator('.problems button').first();
      const text = await link.innerText();
      const frames = (await facts(f)).frames;
      await link.click();
      return { text, frames, stale: true };
    }
    case 'shot': {
      await pollFor(page, 'a finished run', async () => (await facts(f)).status === 'done');
      // The page takes the new theme's variables a moment after the workbench does.
      if (req.theme) await pollFor(page, `the ${req.theme} theme in the page`, () => f.evaluate((t) => document.body.classList.contains(`vscode-${t}`), req.theme));
      if (req.pick) {
        const box = await f.locator('canvas.picture').boundingBox();
        await f.locator('canvas.picture').click({ position: { x: box.width * req.pick[0], y: box.height * req.pick[1] } });
        await pollFor(page, 'the weights of the picked pixel', async () => Boolean((await facts(f)).weights));
      }
      const path = join(outDir, `${req.name}.png`);
      const buf = await page.screenshot({ path });
      const box = await page.locator('iframe.webview.ready').last().boundingBox();
      const panel = box ? pngStats(await page.screenshot({ clip: box })) : { colours: 0, width: 0, height: 0 };
      return { path, page: pngStats(buf), panel };
    }
    case 'spectrum': {
      // The frequency map of the finished run: distinct colours in the map part of its canvas, a colour bar whose
      // colour changes from top to bottom, and pixels of the accent (the stable region's edge) inside the map.
      await pollFor(page, 'a finished run with its frequency map', async () => {
        const x = await facts(f);
        return x.status !== 'running' && x.status !== 'idle' && x.spectrum ? x : null;
      });
      const canvas = f.locator('canvas.spectrum');
      await canvas.scrollIntoViewIfNeeded();
      const px = await f.evaluate(() => {
        const c = document.querySelector('canvas.spectrum');
        const dpr = window.devicePixelRatio || 1;
        const { data } = c.getContext('2d').getImageData(0, 0, c.width, c.height);
        const cssW = c.width / dpr;
        const mapW = Math.round((cssW - 58) * dpr);
        const mapH = Math.round(Math.min(mapW, c.height - 18 * dpr));
        const accent = getComputedStyle(document.body).getPropertyValue('--vscode-focusBorder').trim();
        const probeEl = document.createElement('span');
        probeEl.style.color = accent || '#0a84ff';
        document.body.append(probeEl);
        const [ar, ag, ab] = getComputedStyle(probeEl).color.match(/\d+/g).map(Number);
        probeEl.remove();
        const map = new Set();
        let edge = 0;
        for (let y = 0; y < mapH; y++) for (let x = 0; x < mapW; x++) {
          const i = (y * c.width + x) * 4;
          map.add((data[i] << 16) | (data[i + 1] << 8) | data[i + 2]);
          if (Math.abs(data[i] - ar) + Math.abs(data[i + 1] - ag) + Math.abs(data[i + 2] - ab) < 40) edge++;
        }
        const bx = Math.round((cssW - 58 + 8 + 6) * dpr);
        const bar = new Set();
        for (let y = 2; y < mapH - 2; y++) {
          const i = (y * c.width + bx) * 4;
          bar.add((data[i] << 16) | (data[i + 1] << 8) | data[i + 2]);
        }
        const top = (2 * c.width + bx) * 4;
        const bottom = ((mapH - 3) * c.width + bx) * 4;
        return {
          width: c.width, height: c.height, mapColours: map.size, edgePixels: edge, barColours: bar.size,
          barContrast: Math.abs(data[top] - data[bottom]) + Math.abs(data[top + 1] - data[bottom + 1]) + Math.abs(data[top + 2] - data[bottom + 2]),
          text: document.querySelector('.spectrum-text').textContent, iso: !document.querySelector('canvas.spectrum').closest('section').querySelector('figure').hidden,
          approximates: document.body.dataset.approximates,
        };
      });
      const shot = req.name ? await panelShot(page, join(outDir, `${req.name}.png`)) : null;
      return { ...px, shot };
    }
    case 'influence': {
      // Picks a pixel, switches to the influence view and waits for its map; then compares the picture around the
      // picked pixel with the plain input view (the overlay must change it) and counts coloured pixels there.
      await pollFor(page, 'a finished run', async () => (await facts(f)).status === 'done');
      const picture = f.locator('canvas.picture');
      const box = await picture.boundingBox();
      const at = { x: box.width * req.pick[0], y: box.height * req.pick[1] };
      await picture.click({ position: at });
      await pollFor(page, 'the weights of the picked pixel', async () => Boolean((await facts(f)).weights));
      await picture.press('i');
      const d = await pollFor(page, 'the influence map of the picked pixel', async () => {
        const x = await facts(f);
        return x.influence && x.view === 'influence' ? x : null;
      });
      const region = (cx, cy, r) => f.evaluate(([cx, cy, r]) => {
        const c = document.querySelector('canvas.picture');
        const dpr = window.devicePixelRatio || 1;
        const x0 = Math.max(0, Math.round((cx - r) * dpr)), y0 = Math.max(0, Math.round((cy - r) * dpr));
        const w = Math.min(c.width - x0, Math.round(2 * r * dpr)), h = Math.min(c.height - y0, Math.round(2 * r * dpr));
        return Array.from(c.getContext('2d').getImageData(x0, y0, w, h).data);
      }, [cx, cy, r]);
      const R = 24;
      // The ring's place now: the panel may have re-laid out (and re-fitted the picture) since the click.
      const ringAt = (x) => (x.pickAt ? x.pickAt.split(',').map(Number) : [at.x, at.y]);
      const [ox, oy] = ringAt(await facts(f));
      const over = await region(ox, oy, R);
      await picture.press('s');
      const startFacts = await pollFor(page, 'the start view', async () => { const x = await facts(f); return x.view === 'start' ? x : null; });
      const [px, py] = ringAt(startFacts);
      const plain = await region(px, py, R);
      await picture.press('i');
      await pollFor(page, 'the influence view again', async () => (await facts(f)).view === 'influence');
      let diff = 0, coloured = 0;
      for (let i = 0; i < Math.min(over.length, plain.length); i += 4) {
        diff += Math.abs(over[i] - plain[i]) + Math.abs(over[i + 1] - plain[i + 1]) + Math.abs(over[i + 2] - plain[i + 2]);
        if (Math.max(over[i], over[i + 1], over[i + 2]) - Math.min(over[i], over[i + 1], over[i + 2]) > 40) coloured++;
      }
      const legend = await f.locator('.legend').innerText();
      const readout = await f.locator('.readout').innerText();
      // For the picture, zoom in around the picked pixel (wheel over it), so the map is large enough to read.
      if (req.zoom) {
        await f.evaluate(([x, y, n]) => {
          const c = document.querySelector('canvas.picture');
          const r = c.getBoundingClientRect();
          for (let k = 0; k < n; k++) c.dispatchEvent(new WheelEvent('wheel', { deltaY: -100, clientX: r.left + x, clientY: r.top + y, bubbles: true, cancelable: true }));
        }, [ox, oy, req.zoom]);
      }
      if (req.zoom) await page.waitForTimeout(300);
      const shot = req.name ? await panelShot(page, join(outDir, `${req.name}.png`)) : null;
      return { ...d, meanDiff: diff / Math.max(1, over.length / 4), coloured, pixels: over.length / 4, legend, readout, shot };
    }
    case 'pin': {
      // Pins the shown step (the last one of a finished run) as the A/B baseline.
      // With req.step, also wait until that step is the one shown (a rerun may still be on its way in).
      await pollFor(page, 'a finished run', async () => { const x = await facts(f); return x.status === 'done' && (req.step === undefined || x.step === String(req.step)); });
      await f.locator('button', { hasText: 'pin this step' }).first().click();
      return pollFor(page, 'the pinned result', async () => {
        const x = await facts(f);
        return x.pinned ? x : null;
      });
    }
    case 'ab': {
      // After a change, waits for the new run's comparison with the pinned result and reads the A/B section.
      const d = await pollFor(page, 'a comparison with the pinned result', async () => {
        const x = await facts(f);
        return x.status === 'done' && x.pinned && x.comparison && (!req.notRun || x.runId !== req.notRun) ? x : null;
      });
      await f.locator('section.ab').scrollIntoViewIfNeeded();
      const ab = await f.evaluate(() => {
        const counts = Array.from(document.querySelectorAll('canvas.ab-picture')).map((c) => {
          const { data } = c.getContext('2d').getImageData(0, 0, c.width, c.height);
          const set = new Set();
          for (let i = 0; i < data.length; i += 16) set.add((data[i] << 16) | (data[i + 1] << 8) | data[i + 2]);
          return set.size;
        });
        const rows = Array.from(document.querySelectorAll('.ab-table tr')).map((tr) => Array.from(tr.children).map((c) => c.textContent));
        return { visible: !document.querySelector('section.ab').hidden, counts, rows, between: document.querySelector('.ab-between').textContent, label: document.querySelector('.ab-label').textContent };
      });
      const shot = req.name ? await panelShot(page, join(outDir, `${req.name}.png`)) : null;
      return { ...d, ...ab, shot };
    }
    default:
      throw new Error(`unknown live run probe ${req.action}`);
  }
}
