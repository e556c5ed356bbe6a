// Regenerates docs/mask-example.png and docs/colour-example.png, the README's pictures of the two input examples,
// with Fluxel's own run command on generated pictures only:
// - masked-smoothing.fluxel on the survey scene (192×144, noise 0.1, seed 1) with the generated mask: input, mask, result;
// - colour-edge-preserving.fluxel on the generated colour chart (192×144, noise 0.05, seed 1): input, result.
// The panels sit side by side with a 6-pixel gap. Usage: npm run build && node test/tools/make-input-examples.mjs
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, renameSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { PNG } from 'pngjs';

const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
const out = mkdtempSync(join(tmpdir(), 'fluxel-input-examples-'));

function fluxel(...args) {
  const r = spawnSync(process.execPath, [join(root, 'dist/cli.js'), 'run', ...args], { cwd: root, stdio: 'inherit' });
  if (r.status !== 0) {
    console.error(`fluxel run failed (exit ${r.status}); run \`npm run build\` first`);
    process.exit(1);
  }
}

/** Reads a PNG as RGB rows (grey pictures repeat their value). */
function rgbOf(file) {
  const png = PNG.sync.read(readFileSync(file));
  return { width: png.width, height: png.height, data: png.data };
}

/** Panels side by side on a light background, written atomically (temporary file, then rename). */
function sideBySide(files, target) {
  const panels = files.map(rgbOf);
  const gap = 6;
  const width = panels.reduce((w, p) => w + p.width, 0) + gap * (panels.length + 1);
  const height = Math.max(...panels.map(p => p.height)) + 2 * gap;
  const png = new PNG({ width, height });
  png.data.fill(235);
  let x0 = gap;
  for (const p of panels) {
    for (let y = 0; y < p.height; y++) {
      for (let x = 0; x < p.width; x++) {
        const s = (y * p.width + x) * 4, d = ((y + gap) * width + x + x0) * 4;
        png.data[d] = p.data[s]; png.data[d + 1] = p.data[s + 1]; png.data[d + 2] = p.data[s + 2]; png.data[d + 3] = 255;
      }
    }
    x0 += p.width + gap;
  }
  const tmp = `${target}.${process.pid}.tmp`;
  writeFileSync(tmp, PNG.sync.write(png));
  renameSync(tmp, target);
  console.log(`wrote ${target}`);
}

const scene = ['--scene', 'survey', '--size', '192x144', '--noise', '0.1', '--seed', '1'];
fluxel('examples/masked-smoothing.fluxel', ...scene, '--input', 'mask=scene:mask', '--steps', '0', '--output', join(out, 'in.png'));
fluxel('examples/masked-smoothing.fluxel', ...scene, '--input', 'mask=scene:mask', '--steps', '0', '--field', 'm', '--output', join(out, 'mask.png'));
fluxel('examples/masked-smoothing.fluxel', ...scene, '--input', 'mask=scene:mask', '--output', join(out, 'out.png'));
sideBySide([join(out, 'in.png'), join(out, 'mask.png'), join(out, 'out.png')], join(root, 'docs', 'mask-example.png'));

const chart = ['--scene', 'palette', '--size', '192x144', '--noise', '0.05', '--seed', '1'];
fluxel('examples/colour-edge-preserving.fluxel', ...chart, '--steps', '0', '--output', join(out, 'cin.png'));
fluxel('examples/colour-edge-preserving.fluxel', ...chart, '--output', join(out, 'cout.png'));
sideBySide([join(out, 'cin.png'), join(out, 'cout.png')], join(root, 'docs', 'colour-example.png'));
rmSync(out, { recursive: true, force: true });
