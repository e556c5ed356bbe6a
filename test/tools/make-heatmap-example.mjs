// Regenerates docs/heatmap-example.png, the README's example heat map, with Fluxel's own sweep command:
// the edge-preserving example on the generated survey scene (noise 0.1, seed 1), K from 0.01 to 0.2 in 20 values,
// PSNR at each of 100 steps. Usage: npm run build && node test/tools/make-heatmap-example.mjs
import { spawnSync } from 'node:child_process';
import { copyFileSync, mkdtempSync, renameSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
const out = mkdtempSync(join(tmpdir(), 'fluxel-heatmap-example-'));
const args = ['dist/cli.js', 'sweep', 'examples/edge-preserving.fluxel', '--scene', 'survey', '--noise', '0.1', '--seed', '1',
  '--vary', 'K=0.01:0.2:20', '--steps', '100', '--metric', 'psnr', '--out', out];
const r = spawnSync(process.execPath, args, { cwd: root, stdio: 'inherit' });
if (r.status !== 0) {
  console.error(`fluxel sweep failed (exit ${r.status}); run \`npm run build\` first`);
  process.exit(1);
}
// Copy beside the target, then rename: the committed picture is only replaced by a complete file.
const target = join(root, 'docs', 'heatmap-example.png');
const tmp = `${target}.${process.pid}.tmp`;
copyFileSync(join(out, 'sweep.png'), tmp);
renameSync(tmp, target);
rmSync(out, { recursive: true, force: true });
console.log(`wrote ${target}`);
