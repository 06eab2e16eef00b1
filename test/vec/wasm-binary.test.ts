// The hand-written WebAssembly encoder: its integers against the examples of the DWARF 5
// standard (section 7.6, tables 7.7 and 7.8, the LEB128 encoding the wasm binary format uses),
// and the kernels' module against the engine's own validator.
import { describe, expect, it } from 'vitest';
import { signedLeb, unsignedLeb } from '../../src/vec/wasm/wasm-binary.js';
import { rowKernelsModuleBytes } from '../../src/vec/wasm/row-kernels-module.js';

interface Validator {
  validate(bytes: Uint8Array): boolean;
}
const engine = (globalThis as unknown as { WebAssembly: Validator }).WebAssembly;

describe('wasm binary encoding', () => {
  it('writes LEB128 as the DWARF 5 examples do', () => {
    expect(unsignedLeb(2)).toEqual([2]);
    expect(unsignedLeb(127)).toEqual([127]);
    expect(unsignedLeb(128)).toEqual([0x80, 1]);
    expect(unsignedLeb(129)).toEqual([1 + 0x80, 1]);
    expect(unsignedLeb(130)).toEqual([2 + 0x80, 1]);
    expect(unsignedLeb(12857)).toEqual([57 + 0x80, 100]);
    expect(signedLeb(2)).toEqual([2]);
    expect(signedLeb(-2)).toEqual([0x7e]);
    expect(signedLeb(127)).toEqual([127 + 0x80, 0]);
    expect(signedLeb(-127)).toEqual([1 + 0x80, 0x7f]);
    expect(signedLeb(128)).toEqual([0x80, 1]);
    expect(signedLeb(-128)).toEqual([0x80, 0x7f]);
    expect(signedLeb(129)).toEqual([1 + 0x80, 1]);
    expect(signedLeb(-129)).toEqual([0x7f + 0x80, 0x7e]);
  });

  it('produces a module the engine validates, the same bytes on every call', () => {
    const bytes = rowKernelsModuleBytes();
    expect(engine.validate(bytes)).toBe(true);
    expect(rowKernelsModuleBytes()).toEqual(bytes);
    expect(engine.validate(bytes.subarray(0, bytes.length - 1))).toBe(false);
  });
});
