// A small inline plot of a diffusivity g(s) and its flux s·g(s), drawn as SVG by our own code and returned as a
// data: URI for a Markdown image in the hover. Pure: no vscode, no DOM.

export interface PlotOptions {
  readonly width?: number;
  readonly height?: number;
  /** Largest s on the horizontal axis (s runs from 0). */
  readonly sMax: number;
  readonly samples?: number;
  /** Marks this s with a dashed vertical line (the flux peak). */
  readonly mark?: number | null;
}

export interface Plot {
  readonly svg: string;
  readonly dataUri: string;
}

function finite(v: number): number | null {
  return Number.isFinite(v) ? v : null;
}

/** Samples g on [0, sMax]; each curve is scaled to its own maximum |value| so both shapes read at one size. */
export function diffusivityPlot(g: (s: number) => number, opts: PlotOptions): Plot {
  const W = opts.width ?? 240;
  const H = opts.height ?? 120;
  const n = opts.samples ?? 120;
  const pad = 8;
  const sMax = opts.sMax > 0 && Number.isFinite(opts.sMax) ? opts.sMax : 1;
  const gs: (number | null)[] = [];
  const fs: (number | null)[] = [];
  for (let i = 0; i <= n; i++) {
    const s = (i / n) * sMax;
    let v: number;
    try { v = g(s); } catch { v = NaN; }
    gs.push(finite(v));
    fs.push(finite(s * v));
  }
  const scale = (vals: (number | null)[]): number => Math.max(1e-300, ...vals.map((v) => (v === null ? 0 : Math.abs(v))));
  const gMax = scale(gs);
  const fMax = scale(fs);
  const anyNeg = [...gs, ...fs].some((v) => v !== null && v < 0);
  const y0 = anyNeg ? H / 2 : H - pad;
  const ySpan = anyNeg ? H / 2 - pad : H - 2 * pad;
  const path = (vals: (number | null)[], max: number): string => {
    let d = '';
    let pen = false;
    vals.forEach((v, i) => {
      if (v === null) { pen = false; return; }
      const x = pad + (i / n) * (W - 2 * pad);
      const y = y0 - (v / max) * ySpan;
      d += `${pen ? 'L' : 'M'}${x.toFixed(1)} ${y.toFixed(1)}`;
      pen = true;
    });
    return d;
  };
  let mark = '';
  if (opts.mark !== undefined && opts.mark !== null && opts.mark > 0 && opts.mark <= sMax) {
    const x = pad + (opts.mark / sMax) * (W - 2 * pad);
    mark = `<line x1="${x.toFixed(1)}" y1="${pad}" x2="${x.toFixed(1)}" y2="${H - pad}" stroke="#8a8a8a" stroke-dasharray="3 3"/>`;
  }
  const svg = `<svg xmlns="http://www.w3.org/2000/svg" width="${W}" height="${H}" viewBox="0 0 ${W} ${H}">`
    + `<rect x="0.5" y="0.5" width="${W - 1}" height="${H - 1}" fill="none" stroke="#8a8a8a" stroke-opacity="0.5"/>`
    + `<line x1="${pad}" y1="${y0}" x2="${W - pad}" y2="${y0}" stroke="#8a8a8a" stroke-opacity="0.6"/>`
    + mark
    + `<path d="${path(gs, gMax)}" fill="none" stroke="#3d8fd1" stroke-width="2"/>`
    + `<path d="${path(fs, fMax)}" fill="none" stroke="#d9822b" stroke-width="2"/>`
    + `<text x="${W - pad}" y="${pad + 10}" text-anchor="end" font-family="sans-serif" font-size="10" fill="#3d8fd1">g(s)</text>`
    + `<text x="${W - pad}" y="${pad + 22}" text-anchor="end" font-family="sans-serif" font-size="10" fill="#d9822b">s·g(s)</text>`
    + `</svg>`;
  const dataUri = `data:image/svg+xml;base64,${base64(svg)}`;
  return { svg, dataUri };
}

function base64(s: string): string {
  // Buffer exists in the extension host (Node); the fallback keeps this module free of Node imports.
  const B = (globalThis as { Buffer?: { from(s: string, enc: string): { toString(enc: string): string } } }).Buffer;
  if (B) return B.from(s, 'utf8').toString('base64');
  return btoa(unescape(encodeURIComponent(s)));
}
