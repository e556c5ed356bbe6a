// Our own small WebAssembly binary emitter: LEB128 numbers, function bodies and the few module sections the
// SIMD backend needs (types, imported functions and shared memory, functions, exports, code).
// It checks nothing itself: V8 validates every module when compiling it. Must not import vscode, the DOM or Node modules.

export const I32 = 0x7f, F32 = 0x7d, F64 = 0x7c, V128 = 0x7b;
export type ValType = typeof I32 | typeof F32 | typeof F64 | typeof V128;

/** Plain opcodes (one byte). */
export const Op = {
  block: 0x02, loop: 0x03, if: 0x04, else: 0x05, end: 0x0b, br: 0x0c, brIf: 0x0d, return: 0x0f, call: 0x10, drop: 0x1a, select: 0x1b,
  localGet: 0x20, localSet: 0x21, localTee: 0x22,
  i32Load: 0x28, f32Load: 0x2a, f64Load: 0x2b, i32Store: 0x36, f32Store: 0x38, f64Store: 0x39,
  i32Const: 0x41, i64Const: 0x42, f32Const: 0x43, f64Const: 0x44,
  i32Eqz: 0x45, i32Eq: 0x46, i32Ne: 0x47, i32LtS: 0x48, i32GtS: 0x4a, i32LeS: 0x4c, i32LeU: 0x4d, i32GeS: 0x4e,
  f64Eq: 0x61, f64Ne: 0x62, f64Lt: 0x63, f64Gt: 0x64, f64Le: 0x65, f64Ge: 0x66,
  i32Add: 0x6a, i32Sub: 0x6b, i32Mul: 0x6c, i32And: 0x71, i32Or: 0x72, i32Shl: 0x74, i32ShrU: 0x76,
  f32Min: 0x96, f32Max: 0x97,
  f64Abs: 0x99, f64Neg: 0x9a, f64Sqrt: 0x9f, f64Add: 0xa0, f64Sub: 0xa1, f64Mul: 0xa2, f64Div: 0xa3, f64Min: 0xa4, f64Max: 0xa5,
  f32ConvertI32S: 0xb2, f32DemoteF64: 0xb6, f64ConvertI32S: 0xb7, f64PromoteF32: 0xbb,
} as const;

/** Opcodes after the 0xfd SIMD prefix. */
export const Simd = {
  load: 0x00, store: 0x0b, const: 0x0c, shuffle: 0x0d, i32x4Splat: 0x11, f32x4Splat: 0x13, f64x2Splat: 0x14,
  i32x4Extract: 0x1b, f32x4Extract: 0x1f, f64x2Extract: 0x21,
  f32x4Eq: 0x41, f32x4Ne: 0x42, f32x4Lt: 0x43, f32x4Gt: 0x44, f32x4Le: 0x45, f32x4Ge: 0x46,
  f64x2Eq: 0x47, f64x2Ne: 0x48, f64x2Lt: 0x49, f64x2Gt: 0x4a, f64x2Le: 0x4b, f64x2Ge: 0x4c,
  not: 0x4d, and: 0x4e, andNot: 0x4f, or: 0x50, xor: 0x51, bitselect: 0x52, anyTrue: 0x53,
  f32x4Nearest: 0x6a,
  i32x4LtS: 0x39, i32x4GeS: 0x3f,
  i32x4Shl: 0xab, i32x4Add: 0xae, i32x4Sub: 0xb1, i32x4MinS: 0xb6, i32x4MinU: 0xb7, i32x4MaxS: 0xb8, i32x4MaxU: 0xb9,
  f32x4Abs: 0xe0, f32x4Neg: 0xe1, f32x4Sqrt: 0xe3, f32x4Add: 0xe4, f32x4Sub: 0xe5, f32x4Mul: 0xe6, f32x4Div: 0xe7,
  f32x4Min: 0xe8, f32x4Max: 0xe9, f32x4Pmin: 0xea, f32x4Pmax: 0xeb,
  f64x2Abs: 0xec, f64x2Neg: 0xed, f64x2Sqrt: 0xef, f64x2Add: 0xf0, f64x2Sub: 0xf1, f64x2Mul: 0xf2, f64x2Div: 0xf3,
  f64x2Min: 0xf4, f64x2Max: 0xf5, f64x2Pmin: 0xf6, f64x2Pmax: 0xf7,
  i32x4TruncSatF32x4S: 0xf8, f32x4ConvertI32x4S: 0xfa, f64x2ConvertLowI32x4S: 0xfe,
} as const;

/** Opcodes after the 0xfe threads prefix (all take a memarg; i32 accesses must be naturally aligned). */
export const Atomic = {
  notify: 0x00, wait32: 0x01, i32Load: 0x10, i32Store: 0x17, i32Add: 0x1e, i32Cmpxchg: 0x48,
} as const;

export class Bytes {
  readonly b: number[] = [];
  u8(...xs: number[]): this {
    for (const x of xs) this.b.push(x & 0xff);
    return this;
  }
  /** Unsigned LEB128. */
  u32(x: number): this {
    let v = x >>> 0;
    do {
      const byte = v & 0x7f;
      v >>>= 7;
      this.b.push(v ? byte | 0x80 : byte);
    } while (v);
    return this;
  }
  /** Signed LEB128 of a 32-bit integer. */
  i32(x: number): this {
    let v = x | 0;
    for (;;) {
      const byte = v & 0x7f;
      v >>= 7;
      const done = (v === 0 && !(byte & 0x40)) || (v === -1 && (byte & 0x40));
      this.b.push(done ? byte : byte | 0x80);
      if (done) return this;
    }
  }
  f32(x: number): this {
    const d = new DataView(new ArrayBuffer(4));
    d.setFloat32(0, x, true);
    for (let k = 0; k < 4; k++) this.b.push(d.getUint8(k));
    return this;
  }
  f64(x: number): this {
    const d = new DataView(new ArrayBuffer(8));
    d.setFloat64(0, x, true);
    for (let k = 0; k < 8; k++) this.b.push(d.getUint8(k));
    return this;
  }
  name(s: string): this {
    const enc = new TextEncoder().encode(s);
    this.u32(enc.length);
    for (const c of enc) this.b.push(c);
    return this;
  }
  append(o: Bytes | number[]): this {
    for (const x of o instanceof Bytes ? o.b : o) this.b.push(x);
    return this;
  }
}

/** A function body under construction: locals are declared on demand, code is appended in stack order. */
export class FnBody {
  readonly code = new Bytes();
  private readonly localTypes: ValType[] = [];
  constructor(readonly params: readonly ValType[], readonly results: readonly ValType[]) {}
  local(t: ValType): number {
    this.localTypes.push(t);
    return this.params.length + this.localTypes.length - 1;
  }
  op(...codes: number[]): this {
    this.code.u8(...codes);
    return this;
  }
  simd(code: number): this {
    this.code.u8(0xfd).u32(code);
    return this;
  }
  /** An atomic i32 access (or wait/notify) at a static byte offset. */
  atomic(code: number, offset = 0): this {
    this.code.u8(0xfe).u32(code).u32(2).u32(offset);
    return this;
  }
  get(i: number): this {
    this.code.u8(Op.localGet).u32(i);
    return this;
  }
  set(i: number): this {
    this.code.u8(Op.localSet).u32(i);
    return this;
  }
  tee(i: number): this {
    this.code.u8(Op.localTee).u32(i);
    return this;
  }
  i32c(x: number): this {
    this.code.u8(Op.i32Const).i32(x);
    return this;
  }
  f64c(x: number): this {
    this.code.u8(Op.f64Const).f64(x);
    return this;
  }
  /** v128.const with four f32 or two f64 lanes. */
  v128c(lanes: readonly number[], lane: 'f32' | 'f64' | 'i32'): this {
    this.simd(Simd.const);
    for (const x of lanes) {
      if (lane === 'f32') this.code.f32(x);
      else if (lane === 'f64') this.code.f64(x);
      else {
        const d = new DataView(new ArrayBuffer(4));
        d.setInt32(0, x, true);
        for (let k = 0; k < 4; k++) this.code.u8(d.getUint8(k));
      }
    }
    return this;
  }
  /** Memory access with a static byte offset (memarg: alignment exponent, offset). */
  mem(opcode: number, align: number, offset: number, simd = false): this {
    if (simd) this.simd(opcode);
    else this.op(opcode);
    this.code.u32(align).u32(offset);
    return this;
  }
  encode(): Bytes {
    const out = new Bytes();
    // Runs of equal types are declared together, as the format wants.
    const runs: [number, ValType][] = [];
    for (const t of this.localTypes) {
      const last = runs[runs.length - 1];
      if (last && last[1] === t) last[0]++;
      else runs.push([1, t]);
    }
    out.u32(runs.length);
    for (const [n, t] of runs) out.u32(n).u8(t);
    out.append(this.code).u8(Op.end);
    const sized = new Bytes().u32(out.b.length).append(out);
    return sized;
  }
}

export interface ModuleSpec {
  /** Imported functions (module "m"), each with its own signature. */
  readonly imports: readonly { name: string; params: ValType[]; results: ValType[] }[];
  /** Pages of the imported shared memory `m.memory`. */
  readonly memory: { min: number; max: number };
  readonly funcs: readonly { name: string; body: FnBody }[];
}

function section(out: Bytes, id: number, content: Bytes): void {
  out.u8(id).u32(content.b.length).append(content);
}

/** Encodes the module; functions are numbered after the imports, in order, and exported under their names. */
export function encodeModule(spec: ModuleSpec): Uint8Array {
  const sigs: string[] = [];
  const sigOf = (p: readonly ValType[], r: readonly ValType[]): number => {
    const key = `${p.join(',')}:${r.join(',')}`;
    let k = sigs.indexOf(key);
    if (k < 0) k = sigs.push(key) - 1;
    return k;
  };
  const importSigs = spec.imports.map(f => sigOf(f.params, f.results));
  const funcSigs = spec.funcs.map(f => sigOf(f.body.params, f.body.results));
  const out = new Bytes().u8(0x00, 0x61, 0x73, 0x6d, 0x01, 0x00, 0x00, 0x00);

  const types = new Bytes().u32(sigs.length);
  for (const key of sigs) {
    const [p, r] = key.split(':').map(s => (s ? s.split(',').map(Number) : []));
    types.u8(0x60).u32(p.length).u8(...p).u32(r.length).u8(...r);
  }
  section(out, 1, types);

  const imports = new Bytes().u32(spec.imports.length + 1);
  spec.imports.forEach((f, k) => imports.name('m').name(f.name).u8(0x00).u32(importSigs[k]));
  // Shared memory (flag 3: shared, with maximum), so worker threads can run bands of the same buffers.
  imports.name('m').name('memory').u8(0x02, 0x03).u32(spec.memory.min).u32(spec.memory.max);
  section(out, 2, imports);

  const funcs = new Bytes().u32(spec.funcs.length);
  for (const s of funcSigs) funcs.u32(s);
  section(out, 3, funcs);

  const exports = new Bytes().u32(spec.funcs.length);
  spec.funcs.forEach((f, k) => exports.name(f.name).u8(0x00).u32(spec.imports.length + k));
  section(out, 7, exports);

  const code = new Bytes().u32(spec.funcs.length);
  for (const f of spec.funcs) code.append(f.body.encode());
  section(out, 10, code);
  return Uint8Array.from(out.b);
}
