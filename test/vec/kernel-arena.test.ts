// The kernels' memory: regions that do not overlap, aligned for 16-byte vector loads, zeroed;
// a shard beyond what one 32-bit WebAssembly memory addresses is refused with a stable code.
import { describe, expect, it } from 'vitest';
import {
  REGION_BYTES_MAX,
  allocateKernelMemory,
  allocateKernelRegion,
} from '../../src/vec/wasm/kernel-arena.js';

describe('kernel arena', () => {
  it('hands out disjoint, 16-byte aligned, zeroed regions', () => {
    const first = allocateKernelRegion(24);
    const second = allocateKernelRegion(40);
    for (const region of [first, second]) {
      expect(region.byteOffset % 16).toBe(0);
      expect(region.byteLength).toBeGreaterThanOrEqual(24);
      expect(
        new Uint8Array(region.buffer, region.byteOffset, region.byteLength).every((b) => b === 0),
      ).toBe(true);
    }
    if (first.buffer === second.buffer) {
      const [low, high] = first.byteOffset < second.byteOffset ? [first, second] : [second, first];
      expect(low.byteOffset + low.byteLength).toBeLessThanOrEqual(high.byteOffset);
    }
  });

  it('hands out a zeroed memory of its own, apart from the shared slabs', () => {
    const shared = allocateKernelRegion(64);
    const own = allocateKernelMemory(1000);
    expect(own.byteOffset).toBe(0);
    expect(own.byteLength).toBeGreaterThanOrEqual(1000);
    expect(own.buffer).not.toBe(shared.buffer);
    expect(own.buffer).not.toBe(allocateKernelMemory(1000).buffer);
    expect(new Uint8Array(own.buffer, 0, own.byteLength).every((b) => b === 0)).toBe(true);
  });

  it('refuses a region larger than 4 GiB less one 64 KiB page (wasm32 addressing)', () => {
    expect(REGION_BYTES_MAX).toBe(2 ** 32 - 2 ** 16);
    let code: unknown;
    try {
      allocateKernelRegion(REGION_BYTES_MAX + 1);
    } catch (error) {
      code = (error as { code?: unknown }).code;
    }
    expect(code).toBe('E_KERNEL_MEMORY');
    let ownCode: unknown;
    try {
      allocateKernelMemory(REGION_BYTES_MAX + 1);
    } catch (error) {
      ownCode = (error as { code?: unknown }).code;
    }
    expect(ownCode).toBe('E_KERNEL_MEMORY');
  });
});
