// Memory for the row kernels. A kernel reads its matrix where the module can address it, so an
// objective copies its shard once into a region of a WebAssembly memory. Memories are slabs of a
// fixed size that never grow (growing would detach every Float64Array over the old buffer); a
// region larger than half a slab gets a memory of its own. Regions are never freed one by one: a
// slab is collected with the last region that refers to it, so the waste is bounded by the slabs
// still alive. Few slabs also keep clear of the engine's limit on live memories (about 13,000 on
// Node 20, measured), which one memory per client would reach at 10,000 clients.

import { CodedError } from '../../base/coded-error.js';
import { rowKernelsModuleBytes, type RowKernelExports } from './row-kernels-module.js';

const PAGE_BYTES = 65_536;
/** 64 MiB: a few of them hold the shards of a thousand clients at d = 1,000 */
const SLAB_BYTES = 64 * 1024 * 1024;
/** wasm32 addresses stop at 4 GiB; a region must fit one memory */
export const REGION_BYTES_MAX = 65_536 * PAGE_BYTES - PAGE_BYTES;
const ALIGN_BYTES = 16;

/** a shard too large for one WebAssembly memory */
export class KernelArenaError extends CodedError<'E_KERNEL_MEMORY'> {}

/** A byte range of one memory, with the kernels instantiated on that memory. */
export interface KernelRegion {
  readonly kernels: RowKernelExports;
  readonly buffer: ArrayBuffer;
  readonly byteOffset: number;
  readonly byteLength: number;
}

interface Slab {
  readonly kernels: RowKernelExports;
  readonly buffer: ArrayBuffer;
  usedBytes: number;
}

/** The part of the WebAssembly JS API used here (the project's lib settings do not declare it). */
interface WasmApi {
  Module: new (bytes: Uint8Array) => object;
  Memory: new (limits: { initial: number; maximum: number }) => { buffer: ArrayBuffer };
  Instance: new (module: object, imports: object) => { exports: object };
}
const wasm = (globalThis as unknown as { WebAssembly: WasmApi }).WebAssembly;

let compiled: object | null = null;
let open: Slab | null = null;

function newSlab(bytes: number): Slab {
  compiled ??= new wasm.Module(rowKernelsModuleBytes());
  const pages = Math.ceil(bytes / PAGE_BYTES);
  const memory = new wasm.Memory({ initial: pages, maximum: pages });
  const instance = new wasm.Instance(compiled, { env: { memory } });
  return {
    kernels: instance.exports as unknown as RowKernelExports,
    buffer: memory.buffer,
    usedBytes: 0,
  };
}

/** Bytes of every region handed out so far (for measurements: regions are never freed one by one). */
let regionBytesAllocated = 0;

export function kernelRegionBytesAllocated(): number {
  return regionBytesAllocated;
}

/** `bytes` rounded up to the alignment; past what one memory addresses, E_KERNEL_MEMORY naming `what`. */
function alignedSize(bytes: number, what: string): number {
  const size = Math.ceil(Math.max(bytes, 1) / ALIGN_BYTES) * ALIGN_BYTES;
  if (size > REGION_BYTES_MAX) {
    throw new KernelArenaError(
      'E_KERNEL_MEMORY',
      `${what} needs ${size} bytes of kernel memory, more than the ${REGION_BYTES_MAX} one WebAssembly memory addresses`,
    );
  }
  return size;
}

/**
 * A zeroed memory of its own, of at least `bytes`, outside the slabs and the count above: it is
 * collected with the last object that refers to it, so a large matrix that lives only for one
 * computation (a formed Gram matrix) leaves nothing behind.
 */
export function allocateKernelMemory(bytes: number): KernelRegion {
  const size = alignedSize(bytes, 'a matrix');
  const memory = newSlab(size);
  return { kernels: memory.kernels, buffer: memory.buffer, byteOffset: 0, byteLength: size };
}

/** A zeroed region of at least `bytes`, 16-byte aligned. */
export function allocateKernelRegion(bytes: number): KernelRegion {
  const size = alignedSize(bytes, 'a shard');
  let slab: Slab;
  if (size > SLAB_BYTES / 2) {
    slab = newSlab(size);
  } else {
    if (open === null || open.usedBytes + size > SLAB_BYTES) open = newSlab(SLAB_BYTES);
    slab = open;
  }
  const byteOffset = slab.usedBytes;
  slab.usedBytes += size;
  regionBytesAllocated += size;
  return { kernels: slab.kernels, buffer: slab.buffer, byteOffset, byteLength: size };
}
