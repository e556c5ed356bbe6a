// Regenerates docs/sensitivity-example.png with Fluxel's own commands: the edge-preserving example on the generated
// survey scene (192×192, noise 0.1, seed 1), `fluxel run --sensitivity K,sigma` at the declared values (60 steps):
// the noisy input, the result, and the derivative images ∂u/∂K and ∂u/∂sigma side by side. Derivatives are drawn in
// the live run's diverging colours (media/preview/colour.ts, zero white), each scaled to its own largest |value|;
// labels in the heat map's font (src/tune/font.ts). Usage: npm run build && node test/tools/make-sensitivity-example.mjs
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, renameSync, rmSync, writeFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { build } from 'esbuild';

const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
const out = mkdtempSync(join(tmpdir(), 'fluxel-sensitivity-example-'));
const common = ['dist/cli.js', 'run', 'examples/edge-preserving.fluxel', '--scene', 'survey', '--size', '192x192', '--noise', '0.1', '--seed', '1'];
for (const args of [[...common, '--steps', '0', '--output', join(out, 'input.pfm')], [...common, '--sensitivity', 'K,sigma', '--output', join(out, 'result.pfm')]]) {
  const r = spawnSync(process.execPath, args, { cwd: root, stdio: 'inherit' });
  if (r.status !== 0) {
    console.error(`fluxel run failed (exit ${r.status}); run \`npm run build\` first`);
    process.exit(1);
  }
}

/** A PFM file (one channel, rows stored bottom to top, contracts §3) as rows top to bottom. */
function readPfm(file) {
  const buf = readFileSync(file);
  let pos = 0;
  const token = () => {
    while (/\s/.test(String.fromCharCode(buf[pos]))) pos++;
    let s = '';
    while (!/\s/.test(String.fromCharCode(buf[pos]))) s += String.fromCharCode(buf[pos++]);
    return s;
  };
  if (token() !== 'Pf') throw new Error(`${file}: not a grey PFM`);
  const width = Number(token()), height = Number(token()), scale = Number(token());
  pos++;
  const data = new Float32Array(width * height);
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) {
      const o = pos + 4 * ((height - 1 - y) * width + x);
      data[y * width + x] = scale < 0 ? buf.readFloatLE(o) : buf.readFloatBE(o);
    }
  }
  return { width, height, data };
}

// The colour table, font and PNG encoder are TypeScript: bundle them once for this script.
const bundle = await build({
  stdin: {
    contents: "export { divergingTable, divergingIndex, greyByte } from './media/preview/colour.ts'; export { createCanvas, setPixel, drawText, textWidth } from './src/tune/font.ts'; export { encodeRgbPng } from './src/tune/heatmap.ts';",
    resolveDir: root, loader: 'ts',
  },
  bundle: true, platform: 'node', format: 'cjs', write: false, logLevel: 'warning',
});
const libFile = join(out, 'lib.cjs');
writeFileSync(libFile, bundle.outputFiles[0].contents);
const lib = createRequire(import.meta.url)(libFile);

const panels = [
  { title: 'noisy input', img: readPfm(join(out, 'input.pfm')), kind: 'grey' },
  { title: 'result, 60 steps', img: readPfm(join(out, 'result.pfm')), kind: 'grey' },
  { title: 'du/dK', img: readPfm(join(out, 'result.d-K.pfm')), kind: 'signed' },
  { title: 'du/dσ', img: readPfm(join(out, 'result.d-sigma.pfm')), kind: 'signed' },
];
const W = 192, gap = 12, top = 24, textScale = 2;
const canvas = lib.createCanvas(panels.length * W + (panels.length + 1) * gap, W + top + gap, [255, 255, 255]);
const table = lib.divergingTable(false);
panels.forEach((p, k) => {
  const x0 = gap + k * (W + gap);
  lib.drawText(canvas, p.title, x0 + Math.floor((W - lib.textWidth(p.title, textScale)) / 2), 6, textScale, [40, 40, 40]);
  const scale = Math.max(...p.img.data.map(Math.abs));
  for (let y = 0; y < W; y++) {
    for (let x = 0; x < W; x++) {
      const v = p.img.data[y * p.img.width + x];
      let c;
      if (p.kind === 'grey') {
        const g = lib.greyByte(v, 0, 1);
        c = [g, g, g];
      } else {
        const i = lib.divergingIndex(v, scale) * 3;
        c = [table[i], table[i + 1], table[i + 2]];
      }
      lib.setPixel(canvas, x0 + x, top + y, c);
    }
  }
});
// Written beside the target, then renamed: the committed picture is only replaced by a complete file.
const target = join(root, 'docs', 'sensitivity-example.png');
const tmp = `${target}.${process.pid}.tmp`;
writeFileSync(tmp, lib.encodeRgbPng(canvas));
renameSync(tmp, target);
rmSync(out, { recursive: true, force: true });
console.log(`wrote ${target}`);
