// The few pieces of the WebAssembly binary format (core spec 1.0 section 5, SIMD proposal's
// opcodes) that the row kernels need: LEB128 integers, sections and function bodies. Writing the
// bytes here keeps the build free of an assembler and the run free of any download.

export const F64 = 0x7c;
export const I32 = 0x7f;
export const V128 = 0x7b;

/** Opcodes used by the kernels (core and SIMD; SIMD ones follow the 0xfd prefix). */
export const op = {
  block: 0x02,
  loop: 0x03,
  br: 0x0c,
  brIf: 0x0d,
  end: 0x0b,
  call: 0x10,
  localGet: 0x20,
  localSet: 0x21,
  localTee: 0x22,
  i32Load: 0x28,
  f64Load: 0x2b,
  f64Store: 0x39,
  i32Const: 0x41,
  f64Const: 0x44,
  i32GeU: 0x4f,
  i32Add: 0x6a,
  i32Mul: 0x6c,
  i32And: 0x71,
  i32Shl: 0x74,
  f64Add: 0xa0,
  f64Sub: 0xa1,
  f64Mul: 0xa2,
  simd: 0xfd,
  v128Load: 0x00,
  v128Store: 0x0b,
  f64x2Splat: 0x14,
  f64x2ExtractLane: 0x21,
  f64x2Add: 0xf0,
  f64x2Mul: 0xf2,
} as const;

export function unsignedLeb(value: number): number[] {
  const bytes: number[] = [];
  let v = value >>> 0;
  do {
    let byte = v & 0x7f;
    v >>>= 7;
    if (v !== 0) byte |= 0x80;
    bytes.push(byte);
  } while (v !== 0);
  return bytes;
}

export function signedLeb(value: number): number[] {
  const bytes: number[] = [];
  let v = value | 0;
  for (;;) {
    const byte = v & 0x7f;
    v >>= 7;
    const done = (v === 0 && (byte & 0x40) === 0) || (v === -1 && (byte & 0x40) !== 0);
    bytes.push(done ? byte : byte | 0x80);
    if (done) return bytes;
  }
}

function name(text: string): number[] {
  const utf8 = [...Buffer.from(text, 'utf8')];
  return [...unsignedLeb(utf8.length), ...utf8];
}

function vector(items: number[][]): number[] {
  return [...unsignedLeb(items.length), ...items.flat()];
}

function section(id: number, content: number[]): number[] {
  return [id, ...unsignedLeb(content.length), ...content];
}

export interface WasmFunction {
  exportName: string;
  params: number[];
  results: number[];
  /** local types after the parameters, one entry per local */
  locals: number[];
  /** the instructions, without the final `end` */
  code: number[];
}

/**
 * A module importing one memory as env.memory (no maximum needed: the caller's memory is fixed)
 * and exporting every function under its name. Each function has a type of its own.
 */
export function encodeModule(functions: WasmFunction[]): Uint8Array {
  const types = functions.map((f) => [
    0x60,
    ...vector(f.params.map((t) => [t])),
    ...vector(f.results.map((t) => [t])),
  ]);
  const imports = [[...name('env'), ...name('memory'), 0x02, 0x00, ...unsignedLeb(1)]];
  const declarations = functions.map((_, i) => unsignedLeb(i));
  const exports = functions.map((f, i) => [...name(f.exportName), 0x00, ...unsignedLeb(i)]);
  const bodies = functions.map((f) => {
    const locals = vector(f.locals.map((t) => [1, t]));
    const body = [...locals, ...f.code, op.end];
    return [...unsignedLeb(body.length), ...body];
  });
  return Uint8Array.from([
    0x00,
    0x61,
    0x73,
    0x6d,
    0x01,
    0x00,
    0x00,
    0x00,
    ...section(1, vector(types)),
    ...section(2, vector(imports)),
    ...section(3, vector(declarations)),
    ...section(7, vector(exports)),
    ...section(10, vector(bodies)),
  ]);
}
