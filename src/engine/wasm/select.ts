// Backend selection: the engine's default backend (the WebAssembly SIMD kernels, which fall back to the JavaScript
// kernels per scheme) and the names `js | wasm | auto` that the CLI and the settings accept.
// Must not import vscode, the DOM or Node modules.

import { jsBackend } from '../jsBackend';
import type { KernelBackend } from '../types';
import { wasmBackend } from './backend';

export type BackendChoice = 'js' | 'wasm' | 'auto';
export const BACKEND_CHOICES: readonly BackendChoice[] = ['js', 'wasm', 'auto'];

let chosen: KernelBackend | null = null;

/**
 * The backend a run uses when its options name none. `auto` is the SIMD backend: it is the faster one wherever
 * it compiles (measured in test/bench/wasm.bench.ts), and where it does not it runs the JavaScript kernels itself.
 */
export function defaultBackend(): KernelBackend {
  return chosen ?? wasmBackend;
}

/** Replaces the default (null restores it); for running a whole test suite on one backend. */
export function setDefaultBackend(b: KernelBackend | null): void {
  chosen = b;
}

export function backendByName(name: BackendChoice): KernelBackend {
  return name === 'js' ? jsBackend : wasmBackend;
}
