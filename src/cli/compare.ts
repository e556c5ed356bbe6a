// `fluxel compare REF IMG [--json] [--range LO:HI]`: MSE, PSNR and SSIM of IMG against REF (numerics.md "Metrics").
// Integer formats are scaled to [0, 1] (or by --range), so the peak L is 1. Exit 0 ok, 1 bad input, 2 usage.
// Node-only front end over src/analysis/metrics and src/images; must not import vscode.
//
// Images under 11×11: SSIM is undefined there, so we print MSE and PSNR, say plainly that SSIM has no value
// (JSON: "ssim": null with "ssimNote"), and exit 0, because the numbers we do print are correct; a script that
// needs SSIM sees null rather than a made-up 1.

import { compareImages, formatMetric, MetricError, type MetricImage } from '../analysis/metrics';
import { readImageFile } from '../images/files';
import { ImageError, type DecodedImage } from '../images/types';
import { guard, parseCommandLine, UsageError } from './args';

const USAGE = [
  'usage: fluxel compare REF IMG [--json] [--range LO:HI]',
  '  Quality of IMG against the reference REF (any supported format). Integer samples are scaled to [0, 1]',
  '  (--range LO:HI for data using part of the range: value = (sample - LO) / (HI - LO)); float data pass unchanged.',
  '  PSNR uses peak 1; SSIM follows Wang et al. 2004 (11×11 Gaussian window, sigma 1.5, K1 0.01, K2 0.03, L 1).',
].join('\n');

const OPTIONS = { json: { type: 'boolean' }, range: { type: 'string' }, help: { type: 'boolean', short: 'h' } } as const;

/**
 * Float64 values of a decoded image. The decoder stores Float32, which rounds sample/(2^bits − 1) by up to
 * 6e-8 relative; for grey integer files the sample is recovered exactly (16 bits fit easily in Float32's 24)
 * and scaled again in Float64, so the metrics match a Float64 reading of the file (contracts.md §4).
 * Colour files (luma) and float files keep the decoder's values.
 */
export function exactValues(d: DecodedImage): MetricImage {
  const src = d.channels[0];
  const data = Float64Array.from(src.data);
  if (d.scaling && !d.colour) {
    const { lo, hi } = d.scaling;
    for (let i = 0; i < data.length; i++) data[i] = (Math.round(data[i] * (hi - lo) + lo) - lo) / (hi - lo);
  }
  return { width: src.width, height: src.height, data };
}

export function compareMain(argv: string[]): Promise<number> {
  return guard('compare', async () => {
    const { values: o, positionals } = parseCommandLine(argv, OPTIONS, USAGE);
    if (o.help) {
      process.stdout.write(USAGE + '\n');
      return 0;
    }
    if (positionals.length !== 2) throw new UsageError(`expected REF and IMG.\n${USAGE}`);
    const [refPath, imgPath] = positionals;
    let range: { lo: number; hi: number } | undefined;
    if (o.range !== undefined) {
      const m = /^\s*([-+]?[\d.eE+-]+)\s*:\s*([-+]?[\d.eE+-]+)\s*$/.exec(o.range);
      const lo = m ? Number(m[1]) : NaN, hi = m ? Number(m[2]) : NaN;
      if (!Number.isFinite(lo) || !Number.isFinite(hi) || !(hi > lo)) throw new UsageError(`--range takes LO:HI with LO < HI, e.g. 0:4095; got '${o.range}'.\n${USAGE}`);
      range = { lo, hi };
    }
    const read = async (p: string): Promise<MetricImage | null> => {
      try {
        return exactValues(await readImageFile(p, range ? { range } : {}));
      } catch (err) {
        if (err instanceof ImageError) process.stderr.write(`fluxel compare: ${err.message}\n`);
        else process.stderr.write(`fluxel compare: cannot read ${p}: ${(err as NodeJS.ErrnoException).code ?? String(err)}\n`);
        return null;
      }
    };
    const ref = await read(refPath);
    const img = ref && (await read(imgPath));
    if (!ref || !img) return 1;
    if (ref.width !== img.width || ref.height !== img.height) {
      process.stderr.write(`fluxel compare: ${imgPath}: size ${img.width}×${img.height} differs from the reference ${refPath} (${ref.width}×${ref.height}).\n`);
      return 1;
    }
    let c;
    try {
      c = compareImages(ref, img);
    } catch (err) {
      if (err instanceof MetricError) {
        process.stderr.write(`fluxel compare: ${imgPath}: ${err.message}\n`);
        return 1;
      }
      throw err;
    }
    if (o.json) {
      const doc = {
        reference: refPath, image: imgPath, width: c.width, height: c.height, peak: 1,
        mse: c.mse, psnr: c.psnr, ssim: c.ssim, ...(c.ssimNote ? { ssimNote: c.ssimNote } : {}),
        maxAbsError: c.maxAbsError, meanError: c.meanError,
      };
      // JSON has no Infinity: identical images have PSNR "inf" (numerics.md).
      process.stdout.write(JSON.stringify(doc, (_k, v) => (typeof v === 'number' && !Number.isFinite(v) ? formatMetric(v) : v), 2) + '\n');
      return 0;
    }
    const lines = [
      `${imgPath} against ${refPath} (${c.width}×${c.height}, peak 1)`,
      `mse   ${formatMetric(c.mse, 6)}`,
      `psnr  ${formatMetric(c.psnr, 6)}${Number.isFinite(c.psnr) ? ' dB' : ''}`,
      c.ssim === null ? `ssim  n/a: ${c.ssimNote}` : `ssim  ${formatMetric(c.ssim, 6)}`,
      `max |error| ${formatMetric(c.maxAbsError, 6)}, mean error ${formatMetric(c.meanError, 6)}`,
    ];
    process.stdout.write(lines.join('\n') + '\n');
    return 0;
  });
}
