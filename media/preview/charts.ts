// Small line charts of the live run (range and mean over steps, PSNR over steps, a row before and after), drawn
// by uPlot with colours read from the editor theme's chart variables. Vertical marks (the current step, the best
// step) are drawn by a draw hook. DOM code; the series themselves come from viewModel.ts.

import uPlot from 'uplot';

export interface LineDef {
  readonly label: string;
  /** A theme variable such as --vscode-charts-blue, with a fallback colour. */
  readonly colourVar: string;
  readonly fallback: string;
  readonly dash?: number[];
  readonly width?: number;
}

export interface Mark {
  readonly x: number;
  readonly colourVar: string;
  readonly fallback: string;
}

function themeColour(name: string, fallback: string): string {
  const v = getComputedStyle(document.body).getPropertyValue(name).trim();
  return v || fallback;
}

export class LineChart {
  private plot: uPlot | null = null;
  private data: uPlot.AlignedData = [[]];
  private marks: Mark[] = [];

  /** `yFormat` labels the y axis (uPlot's default rounds tiny values, such as a mean drift of 1e-7, to 0). */
  constructor(private readonly host: HTMLElement, private readonly lines: readonly LineDef[], private readonly xLabel: string, private height = 120, private readonly yFormat?: (v: number) => string) {}

  private build(): void {
    this.plot?.destroy();
    const fg = themeColour('--vscode-charts-foreground', '#888');
    const grid = themeColour('--vscode-charts-lines', 'rgba(128,128,128,0.3)');
    const font = `10px ${themeColour('--vscode-font-family', 'sans-serif')}`;
    const width = Math.max(160, this.host.clientWidth || 240);
    const axis = { stroke: fg, grid: { stroke: grid, width: 1 }, ticks: { stroke: grid, width: 1 }, font, labelFont: font };
    const opts: uPlot.Options = {
      width,
      height: this.height,
      legend: { show: true, live: false },
      cursor: { drag: { x: false, y: false }, points: { show: false } },
      scales: { x: { time: false } },
      axes: [
        { ...axis, label: this.xLabel, labelSize: 14, size: 30 },
        { ...axis, size: 44, ...(this.yFormat ? { values: (_u: uPlot, splits: number[]) => splits.map((v) => (this.yFormat as (v: number) => string)(v)) } : {}) },
      ],
      series: [
        { label: this.xLabel },
        ...this.lines.map((l) => ({ label: l.label, stroke: themeColour(l.colourVar, l.fallback), width: l.width ?? 1.5, dash: l.dash, spanGaps: false, points: { show: false } })),
      ],
      hooks: {
        draw: [
          (u: uPlot) => {
            const ctx = u.ctx;
            for (const m of this.marks) {
              const x = u.valToPos(m.x, 'x', true);
              if (!Number.isFinite(x)) continue;
              ctx.save();
              ctx.strokeStyle = themeColour(m.colourVar, m.fallback);
              ctx.lineWidth = Math.max(1, devicePixelRatio);
              ctx.setLineDash([4 * devicePixelRatio, 3 * devicePixelRatio]);
              ctx.beginPath();
              ctx.moveTo(x, u.bbox.top);
              ctx.lineTo(x, u.bbox.top + u.bbox.height);
              ctx.stroke();
              ctx.restore();
            }
          },
        ],
      },
    };
    this.plot = new uPlot(opts, this.data, this.host);
  }

  /** x values and one array per line (null = gap). */
  set(x: number[], ys: (number | null)[][], marks: Mark[] = []): void {
    this.data = [x, ...ys] as uPlot.AlignedData;
    this.marks = marks;
    if (!this.plot) this.build();
    else this.plot.setData(this.data);
  }

  setMarks(marks: Mark[]): void {
    this.marks = marks;
    this.plot?.redraw(false, false);
  }

  /** Rebuilds with the current theme colours and the host's width. */
  refresh(): void {
    if (this.plot) this.build();
  }

  resize(): void {
    if (this.plot) this.plot.setSize({ width: Math.max(160, this.host.clientWidth || 240), height: this.height });
  }
}
