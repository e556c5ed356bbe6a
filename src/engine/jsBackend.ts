// The JavaScript backend: turns generated kernel source into functions with `new Function`, cached by signature.
// Generated code runs only in the extension host, the CLI or the engine worker, never in a webview.
// Must not import vscode, the DOM or Node modules.

import type { CheckedScheme } from '../notation/scheme';
import { generateSource } from './codegen';
import { canonicalScheme, EngineError, hashText } from './plan';
import type { CompiledScheme, DType, Geometry, KernelBackend, KernelContext } from './types';

type InitFn = (g: Geometry, ctx: KernelContext) => void;
type LetFn = (g: Geometry, ctx: KernelContext, e: number) => void;
interface Kernels {
  inits: (InitFn | null)[];
  lets: (LetFn | null)[];
  update: (g: Geometry, ctx: KernelContext) => void;
}

/** Bounded so that a long editing session (one scheme per keystroke) does not keep every version alive. */
const CACHE_LIMIT = 64;

class JsCompiled implements CompiledScheme {
  readonly backend = 'js';
  constructor(readonly dtype: DType, readonly signature: string, readonly source: string, private readonly k: Kernels) {}
  initField(index: number, g: Geometry, ctx: KernelContext): void {
    const f = this.k.inits[index];
    if (!f) throw new EngineError('this field has no initial expression');
    f(g, ctx);
  }
  computeLet(index: number, g: Geometry, ctx: KernelContext, extent: number): void {
    const f = this.k.lets[index];
    if (!f) throw new EngineError('this let is not a per-pixel expression');
    f(g, ctx, extent);
  }
  update(g: Geometry, ctx: KernelContext): void {
    this.k.update(g, ctx);
  }
}

export class JsBackend implements KernelBackend {
  readonly name = 'js';
  private readonly cache = new Map<string, JsCompiled>();
  /** Number of actual compilations (cache misses), for tests and diagnostics. */
  compilations = 0;

  compile(scheme: CheckedScheme, opts: { dtype: DType }): JsCompiled {
    const key = `${opts.dtype}\n${canonicalScheme(scheme)}`;
    const hit = this.cache.get(key);
    if (hit) {
      // Re-insert so the map's order is least-recently-used first.
      this.cache.delete(key);
      this.cache.set(key, hit);
      return hit;
    }
    const { source } = generateSource(scheme, opts.dtype);
    // One fresh Function per (scheme, dtype): Float32 and Float64 buffers never share a call site's type feedback.
    const factory = new Function(source) as () => Kernels;
    const compiled = new JsCompiled(opts.dtype, `js-${opts.dtype}-${hashText(key)}`, source, factory());
    this.compilations++;
    this.cache.set(key, compiled);
    if (this.cache.size > CACHE_LIMIT) this.cache.delete(this.cache.keys().next().value as string);
    return compiled;
  }
}

/** The shared default backend (one cache per process or worker). */
export const jsBackend = new JsBackend();
