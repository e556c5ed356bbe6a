// `fluxel spectrum FILE [--out map.png] [--json]`: the frequency map of a scheme (src/analysis/spectrum.ts): |G(θ)|
// over the frequency plane (2d) or line (1d) with the |G| = 1 edge drawn in ink, and the isotropy error of the
// discrete operator against the continuous equation by direction. The PNG uses the sweep's heat-map renderer
// (src/tune/heatmap.ts) and is written atomically. Exactly one JSON document on stdout with --json.
// Node-only front end; must not import vscode.

import { amplitudeOverDt, frequencyMap, frequencyMapJson, type DtAmplitudeMap, type FrequencyMap } from '../analysis/spectrum';
import { createRun, EngineError, type RunImage } from '../engine';
import { readImageFile, writeFileAtomically } from '../images/files';
import { makeScene } from '../images/scenes';
import { ImageError } from '../images/types';
import { encodeRgbPng, renderHeatmap } from '../tune/heatmap';
import { guard, numberArg, parseCommandLine, rangeArg, sizeArg, UsageError, wholeArg } from './args';
import { loadScheme } from './check';

const USAGE = [
  'usage: fluxel spectrum FILE [--out PATH.png] [--json] [--samples N] [--radius R] [--field NAME]',
  '                       [--at X,Y [--step N] [--input PATH [--range LO:HI] | --scene NAME] [--size WxH]]',
  '  |G(θ)| of one step over θ in [−π, π] per axis, the |G| = 1 edge (ink) and the isotropy error of the operator',
  '  along |θ| = R (default π/2). Linear schemes are exact; others use frozen weights at a flat state, or at pixel',
  '  (X, Y) of the state after N steps (--at, --step) on the input (default the survey scene).',
].join('\n');

const OPTIONS = {
  out: { type: 'string' },
  json: { type: 'boolean' },
  samples: { type: 'string' },
  radius: { type: 'string' },
  field: { type: 'string' },
  at: { type: 'string' },
  step: { type: 'string' },
  input: { type: 'string' },
  range: { type: 'string' },
  scene: { type: 'string' },
  size: { type: 'string' },
  help: { type: 'boolean', short: 'h' },
} as const;

function fmt(v: number): string {
  if (v === 0 || Object.is(v, -0)) return '0';
  return Number(v.toPrecision(4)).toString();
}

function piText(th: number): string {
  const r = th / Math.PI;
  if (Math.abs(r) < 1e-12) return '0';
  if (Math.abs(Math.abs(r) - 1) < 1e-12) return r < 0 ? '−π' : 'π';
  return `${fmt(r).replace('-', '−')}π`;
}

/**
 * 1d schemes: |G(θ)| over θ and dt from 0 to 2·dt, the |G| = 1 edge in ink and the declared dt dashed, so the
 * picture shows which frequencies a larger step would make grow.
 */
export function spectrumPicture1d(file: string, m: FrequencyMap, d: DtAmplitudeMap): Uint8Array {
  const outline = Uint8Array.from(d.edge);
  // The declared dt: the row nearest to it, dashed (every other group of 4 columns).
  let row = 0;
  for (let r = 0; r < d.height; r++) if (Math.abs(d.dts[r] - m.dt) < Math.abs(d.dts[row] - m.dt)) row = r;
  for (let c = 0; c < d.width; c++) if (Math.floor(c / 4) % 2 === 0) outline[row * d.width + c] = 1;
  const where = m.linear ? 'exact (linear)' : `frozen at ${m.at?.x}`;
  return encodeRgbPng(renderHeatmap({
    title: `|G(θ)| of ${file.split(/[\\/]/).pop()} over θ and dt, ${where}`,
    xLabel: 'θ / π',
    yLabel: 'dt',
    barLabel: '|G|',
    xValues: Array.from(d.axis, (a) => a / Math.PI),
    yValues: Array.from(d.dts),
    cells: d.amplitude,
    outline,
    range: d.colourRange,
    note: `ink: |G| = 1, the stable region's edge; dashed: the declared dt = ${fmt(m.dt)}${m.unstableCount ? ` (${m.unstableCount} of ${m.amplitude.length} frequencies unstable there)` : ' (stable there)'}`,
  }));
}

export function spectrumPicture(file: string, m: FrequencyMap): Uint8Array {
  const ticks = Array.from(m.axis, (a) => a / Math.PI);
  const iso = m.isotropy;
  const note = `ink: |G| = 1, the stable region's edge${m.unstableCount ? ` (${m.unstableCount} of ${m.amplitude.length} frequencies unstable)` : ' (none: every frequency is stable)'}` +
    (iso ? `; operator error at |θ| = ${piText(iso.radius)}: ${fmt(100 * iso.min)}–${fmt(100 * iso.max)} % by direction` : '');
  const where = m.linear ? 'exact (linear)' : `frozen at (${m.at?.x}, ${m.at?.y})`;
  return encodeRgbPng(renderHeatmap({
    title: `|G(θ)| of ${file.split(/[\\/]/).pop()} at dt = ${fmt(m.dt)}, ${where}`,
    xLabel: 'θx / π',
    yLabel: m.dims === 2 ? 'θy / π' : '',
    barLabel: '|G|',
    xValues: ticks,
    yValues: m.dims === 2 ? ticks : [0],
    cells: m.amplitude,
    outline: m.edge,
    range: m.colourRange,
    note,
  }));
}

function textReport(file: string, m: FrequencyMap): string {
  const lines = [
    `${file}: frequency map of ${m.fields.join(', ')} at dt = ${fmt(m.dt)}, h = ${fmt(m.spacing)}, ${m.linear ? 'exact (linear scheme)' : `frozen coefficients at (${m.at?.x}, ${m.at?.y})`}`,
    `max |G| = ${fmt(m.maxAmplitude)} at θ = (${m.worstTheta.map(piText).join(', ')}); ${m.unstableCount ? `${m.unstableCount} of ${m.amplitude.length} sampled frequencies have |G| > 1` : 'every sampled frequency has |G| ≤ 1'}`,
  ];
  if (m.isotropy && m.dims === 1) {
    lines.push(`operator vs ${m.equation}: relative error ${fmt(100 * m.isotropy.max)} % at θ = ${piText(m.isotropy.radius)}`);
  } else if (m.isotropy) {
    const iso = m.isotropy;
    lines.push(`operator vs ${m.equation}: relative error at |θ| = ${piText(iso.radius)} from ${fmt(100 * iso.min)} % to ${fmt(100 * iso.max)} % by direction (spread ${fmt(100 * iso.spread)} %)`);
  }
  return lines.join('\n');
}

export function spectrumMain(argv: string[]): Promise<number> {
  return guard('spectrum', async () => {
    const { values: o, positionals } = parseCommandLine(argv, OPTIONS, USAGE);
    if (o.help) {
      process.stdout.write(USAGE + '\n');
      return 0;
    }
    if (positionals.length !== 1) throw new UsageError(`expected one FILE.\n${USAGE}`);
    if (o.out !== undefined && !/\.png$/i.test(o.out)) throw new UsageError(`--out writes a PNG picture: give a name ending in .png, got '${o.out}'.\n${USAGE}`);
    if (o.input && o.scene) throw new UsageError(`give --input or --scene, not both.\n${USAGE}`);
    if ((o.step !== undefined || o.input || o.scene) && o.at === undefined) throw new UsageError(`--step, --input and --scene choose the state for --at X,Y.\n${USAGE}`);
    const file = positionals[0];
    const samples = o.samples === undefined ? undefined : wholeArg(o.samples, '--samples', 3, USAGE);
    if (samples !== undefined && samples > 1025) throw new UsageError(`--samples is at most 1025, got ${samples}.\n${USAGE}`);
    const radius = o.radius === undefined ? undefined : numberArg(o.radius, '--radius', USAGE);
    if (radius !== undefined && !(radius > 0 && radius <= Math.PI)) throw new UsageError(`--radius is a frequency in (0, π], got ${o.radius}.\n${USAGE}`);
    const size = sizeArg(o.size, USAGE);
    const range = rangeArg(o.range, USAGE);
    const loaded = await loadScheme('spectrum', file);
    if (!loaded) return 1;
    const { scheme } = loaded;
    if (scheme.updates.length === 0) {
      process.stderr.write(`fluxel spectrum: ${file}: the scheme has no update, so there is no amplification to show.\n`);
      return 1;
    }
    if (o.field !== undefined && !scheme.updates.some((u) => u.field === o.field)) {
      throw new UsageError(`--field ${o.field}: the scheme has no update of '${o.field}'.`);
    }

    // The state for frozen coefficients: none (a flat state), or the run's state at --step.
    let state: { width: number; height: number; t: number; fields: ArrayLike<number>[] } | undefined;
    let x: number | undefined, y: number | undefined;
    if (o.at !== undefined) {
      const m = /^\s*(-?\d+)\s*(?:,\s*(-?\d+)\s*)?$/.exec(o.at);
      if (!m) throw new UsageError(`--at takes X,Y (whole numbers), got '${o.at}'.\n${USAGE}`);
      x = Number(m[1]);
      y = m[2] === undefined ? 0 : Number(m[2]);
      const step = o.step === undefined ? 0 : wholeArg(o.step, '--step', 0, USAGE);
      let image: RunImage | null = null;
      try {
        if (o.input) image = (await readImageFile(o.input, range ? { range } : {})).channels[0];
        else if (o.scene || scheme.fields.some((f) => f.init.kind === 'image')) image = makeScene(o.scene ?? 'survey', { ...(size ?? {}) }).noisy;
      } catch (err) {
        if (err instanceof ImageError) {
          process.stderr.write(`fluxel spectrum: ${err.message}\n`);
          return 1;
        }
        const code = (err as NodeJS.ErrnoException).code;
        if (code) {
          process.stderr.write(`fluxel spectrum: cannot read ${o.input}: ${code}\n`);
          return 1;
        }
        throw err;
      }
      try {
        const run = createRun(scheme, { image, steps: step, dtype: 'float64', width: image ? undefined : size?.width, height: image ? undefined : size?.height });
        const g = run.geometry;
        if (x < 0 || x >= g.width || y < 0 || y >= g.height) throw new UsageError(`--at ${o.at} is outside the ${g.width}×${g.height} grid.`);
        const r = run.runSync();
        if (r.status === 'blow-up') {
          process.stderr.write(`fluxel spectrum: ${file}: the state blew up at step ${r.stepsDone}, before step ${step}.\n`);
          return 1;
        }
        state = { width: g.width, height: g.height, t: run.t, fields: scheme.fields.map((_, k) => run.fieldData(k)) };
      } catch (err) {
        if (err instanceof EngineError) {
          process.stderr.write(`fluxel spectrum: ${file}: ${err.message}\n`);
          return 1;
        }
        throw err;
      }
    }
    const map = frequencyMap(scheme, {
      ...(samples !== undefined ? { samples } : {}), ...(radius !== undefined ? { radius } : {}),
      ...(o.field !== undefined ? { field: o.field } : {}), ...(state ? { state, x, y } : {}),
    });
    if (o.out !== undefined) {
      let picture: Uint8Array;
      if (scheme.dims === 1) {
        const dts = Array.from({ length: 101 }, (_, k) => (map.dt * k) / 50);
        picture = spectrumPicture1d(file, map, amplitudeOverDt(scheme, dts, { ...(state ? { state, x, y } : {}) }));
      } else picture = spectrumPicture(file, map);
      await writeFileAtomically(o.out, picture);
    }
    if (o.json) process.stdout.write(JSON.stringify({ file, ...(o.out !== undefined ? { out: o.out } : {}), ...frequencyMapJson(map) }) + '\n');
    else {
      process.stdout.write(textReport(file, map) + '\n');
      if (o.out !== undefined) process.stdout.write(`wrote ${o.out}\n`);
    }
    return 0;
  });
}
