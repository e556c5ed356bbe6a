// The few WebAssembly JavaScript API types the SIMD backend uses, declared here because the project's
// type libraries (ES2022, no DOM) do not describe them. Must not import vscode, the DOM or Node modules.

export interface WasmMemory {
  readonly buffer: ArrayBuffer | SharedArrayBuffer;
}
// eslint-disable-next-line @typescript-eslint/no-empty-interface
export interface WasmModule {
  readonly __wasmModule?: never;
}
export interface WasmInstance {
  readonly exports: Record<string, unknown>;
}

interface WasmApi {
  Memory: new (d: { initial: number; maximum: number; shared: boolean }) => WasmMemory;
  Module: new (bytes: Uint8Array) => WasmModule;
  Instance: new (m: WasmModule, imports: Record<string, Record<string, unknown>>) => WasmInstance;
}

/** The runtime's WebAssembly object, or null where there is none. */
export const wasmApi: WasmApi | null = ((globalThis as { WebAssembly?: WasmApi }).WebAssembly ?? null);
