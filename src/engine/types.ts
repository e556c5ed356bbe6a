// Engine data types: the backend interface, compiled schemes, run options, warnings and frame statistics.
// Plain type definitions shared by the JavaScript backend, the runner and the worker protocol.
// Must not import vscode, the DOM or Node modules.

import type { SourceRange } from '../notation/ast';
import type { CheckedScheme } from '../notation/scheme';

export type { CheckedScheme };

export type DType = 'float32' | 'float64';
export type FieldArray = Float32Array | Float64Array;

/**
 * A compiled scheme is independent of the image size, the halo, the parameter values and dt:
 * those arrive at run time, so moving a slider never recompiles.
 */
export interface CompiledScheme {
  readonly backend: string;
  readonly dtype: DType;
  readonly signature: string;
  /** Field init kernels, one per field (null for `image` fields). */
  initField(index: number, g: Geometry, ctx: KernelContext): void;
  /** Computes let number `index` (an `expr` let) over the image extended by `extent` cells. */
  computeLet(index: number, g: Geometry, ctx: KernelContext, extent: number): void;
  /** All updates of one step, fused into one pixel loop; fills ctx.monitor. */
  update(g: Geometry, ctx: KernelContext): void;
  /**
   * Optional: `count` padded buffers for a run of this geometry, where the backend wants them (the WebAssembly
   * backend keeps them in one shared memory); null or absent means ordinary typed arrays.
   */
  allocateBuffers?(g: Geometry, count: number): FieldArray[] | null;
  /**
   * Optional: up to `passes` two-step passes over the buffers in one call (temporal blocking: step s + 1 lives only
   * in per-thread band buffers). Pass p reads the updated fields' buffers ctx.cur (p even) or ctx.next (p odd) and
   * writes the other, halo included; the runner swaps ctx.cur and ctx.next once per pass done. A pass counts only
   * when both its steps are quiet: every updated field k's values within [limits.lo[k], limits.hi[k]] (no NaN);
   * the first pass that is not ends the call, and its input (the fields after the passes before) is intact.
   * Returns the number of passes done, or -1, having written nothing the runner reads, where the scheme or the
   * buffers do not allow passes (the runner then takes single steps for the rest of the run). Only called for
   * schemes without lets whose updates do not read t. Results are bitwise those of single steps (update, then a halo
   * refill). Monitors of the steps of a pass are not reported (quiet steps have nothing to report).
   */
  updatePasses?(g: Geometry, ctx: KernelContext, passes: number, limits: StepLimits, ghosts: readonly GhostPlanLike[]): number;
}

/** The halo plans of boundary.ts, as the backends see them (one per field). */
export type GhostPlanLike =
  | { readonly kind: 'gather'; readonly dst: Int32Array; readonly src: Int32Array }
  | { readonly kind: 'constant'; readonly value: number };

/** Where another backend (WebAssembly SIMD, a later issue) plugs in. */
export interface KernelBackend {
  readonly name: string;
  compile(scheme: CheckedScheme, opts: { dtype: DType }): CompiledScheme;
}

/**
 * Padded buffer geometry shared by every field and let of a run.
 * Pixel (x, y) lives at index (y + haloY) * pw + (x + haloX); 1d schemes have haloY = 0 and treat rows independently.
 */
export interface Geometry {
  readonly width: number;
  readonly height: number;
  readonly haloX: number;
  readonly haloY: number;
  /** Padded width (row stride). */
  readonly pw: number;
  /** Padded height. */
  readonly ph: number;
}

/** Per-field min, max and a non-finite flag, written by the update kernel each step. */
/** Per field: the range a step's new values must stay in for the monitors to have nothing to report. */
export interface StepLimits {
  readonly lo: Float64Array;
  readonly hi: Float64Array;
}

export interface StepMonitor {
  /** Indexed by field: min and max of the new values (NaN never compares, so it is tracked separately). */
  readonly min: Float64Array;
  readonly max: Float64Array;
  /** (min - min) + (max - max): NaN exactly when some new value is NaN or infinite (Math.min/max propagate NaN). */
  readonly bad: Float64Array;
}

/** Everything a kernel reads or writes; arrays are indexed by field or let number. */
export interface KernelContext {
  cur: FieldArray[];
  next: FieldArray[];
  lets: FieldArray[];
  params: Float64Array;
  dt: number;
  t: number;
  monitor: StepMonitor;
}

export type WarningKind = 'blow-up' | 'new-extremum' | 'growth' | 'no-convergence';

/** Why a run ended: its step count, the `until change < tol` rule, the step cap of that rule, a cancel or a blow-up. */
export type StopReason = 'steps' | 'change' | 'cap' | 'cancelled' | 'blow-up';

export interface RunWarning {
  readonly kind: WarningKind;
  readonly step: number;
  readonly x: number;
  readonly y: number;
  readonly field: string;
  readonly message: string;
  readonly range: SourceRange;
}

export interface FieldStats {
  readonly min: number;
  readonly max: number;
  readonly mean: number;
  /** Per-step measures (RunOptions.measures, on by default): mean minus the field's mean at step 0. */
  readonly drift?: number;
  /** Isotropic total variation Σ√(dx² + dy²) and Dirichlet energy ½Σ(dx² + dy²), forward differences (numerics.md). */
  readonly tv?: number;
  readonly energy?: number;
  /** ‖uⁿ − uⁿ⁻¹‖ over the pixels, RMS and max, for updated fields at steps ≥ 1. */
  readonly change?: { readonly rms: number; readonly max: number };
}

export interface FrameStats {
  readonly step: number;
  readonly t: number;
  readonly fields: Record<string, FieldStats>;
  readonly psnr?: number;
  readonly ssim?: number;
}
