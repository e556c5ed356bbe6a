// Runs a scheme once through the engine (in the engine's worker thread) on a generated scene, for the code lens and
// the "run to file" command, until the live preview exists. Reports one line per run; never blocks the host.

import * as vscode from 'vscode';
import type { Core } from './core';
import type { EngineWorker, WorkerRunOutcome } from '../engine/worker/workerClient';
import { readSettings } from './config';
import { Disposable } from './util/dispose';

export interface RunSummary {
  readonly line: string;
  readonly outcome: WorkerRunOutcome | null;
  readonly primary: string | null;
}

const fmt = (v: number): string => Number(v.toPrecision(3)).toString();

export class SchemeRunner extends Disposable {
  private engine: EngineWorker | null = null;
  private readonly results = new Map<string, RunSummary>();
  private readonly running = new Set<string>();
  private readonly changed = this._register(new vscode.EventEmitter<vscode.Uri>());
  readonly onDidChange = this.changed.event;

  constructor(private readonly loadCore: () => Promise<Core>, private readonly log: (line: string) => void) {
    super();
  }

  lastResult(uri: vscode.Uri): RunSummary | undefined {
    return this.results.get(uri.toString());
  }

  isRunning(uri: vscode.Uri): boolean {
    return this.running.has(uri.toString());
  }

  async run(doc: vscode.TextDocument): Promise<RunSummary> {
    const key = doc.uri.toString();
    const core = await this.loadCore();
    const checked = core.parseAndCheck(doc.getText());
    if (!checked.scheme) {
      const s = { line: 'Not run: the scheme has errors (see Problems).', outcome: null, primary: null };
      this.results.set(key, s);
      this.changed.fire(doc.uri);
      return s;
    }
    const { maxPreviewSize: size, backend } = readSettings(doc.uri);
    const needsImage = checked.scheme.fields.some((f) => f.init.kind === 'image');
    const scene = needsImage ? core.makeScene('survey', { width: size, height: checked.scheme.dims === 1 ? 1 : size }) : null;
    this.engine ??= new core.EngineWorker();
    this.running.add(key);
    this.changed.fire(doc.uri);
    const t0 = Date.now();
    try {
      // Named inputs (`image "mask"`) get the generated mask, as in the live run until the user chooses a file.
      const named = scene ? checked.scheme.fields.filter((f) => f.init.kind === 'image' && f.init.input !== null) : [];
      const fieldImages = Object.fromEntries(named.map((f) => [f.name, core.makeMask(scene!.noisy.width, scene!.noisy.height)]));
      const handle = this.engine.start({ source: doc.getText() }, {
        image: scene ? scene.noisy : null,
        ...(named.length ? { fieldImages } : {}),
        width: size,
        height: checked.scheme.dims === 1 ? 1 : size,
        every: 0,
        backend,
      });
      const outcome = await handle.done;
      const r = outcome.result;
      const last = r.frames[r.frames.length - 1];
      const primaryName = checked.scheme.fields.find((f) => f.init.kind === 'image')?.name ?? checked.scheme.updates[0]?.field ?? checked.scheme.fields[0]?.name ?? null;
      const st = primaryName && last ? last.fields[primaryName] : undefined;
      const where = scene ? `a ${scene.options.width}×${scene.options.height} survey tile` : `a ${size}×${checked.scheme.dims === 1 ? 1 : size} grid`;
      const findings = r.warnings.length === 0 ? 'no findings' : `${r.warnings.length} finding${r.warnings.length > 1 ? 's' : ''}: ${r.warnings[0].kind}`;
      const status = r.status === 'blow-up' ? ` — blew up at step ${r.stepsDone}` : r.status === 'cancelled' ? ' — cancelled' : '';
      const line = `Ran ${r.stepsDone}/${r.steps} steps on ${where} in ${((Date.now() - t0) / 1000).toFixed(2)} s${status}: `
        + (st ? `${primaryName} in [${fmt(st.min)}, ${fmt(st.max)}], mean ${fmt(st.mean)}` : 'no field statistics')
        + ` · ${findings}`;
      this.log(`${line} · backend ${r.backend}`);
      for (const w of r.warnings) this.log(`  finding: ${w.message}`);
      const s = { line, outcome, primary: primaryName };
      this.results.set(key, s);
      return s;
    } catch (err) {
      const s = { line: `Run failed: ${err instanceof Error ? err.message : String(err)}`, outcome: null, primary: null };
      this.log(s.line);
      this.results.set(key, s);
      return s;
    } finally {
      this.running.delete(key);
      this.changed.fire(doc.uri);
    }
  }

  override dispose(): void {
    void this.engine?.terminate();
    this.engine = null;
    super.dispose();
  }
}
