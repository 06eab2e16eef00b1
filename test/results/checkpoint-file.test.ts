// checkpoint.bin: the state's tree and vectors round-trip bit for bit (the special doubles
// included), the vectors sit 8-byte aligned, the write leaves no temporary file, and every kind
// of damage is refused with its own code.

import { mkdtempSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import {
  CHECKPOINT_FILE,
  CHECKPOINT_FORMAT_VERSION,
  decodeCheckpoint,
  encodeCheckpoint,
  readCheckpoint,
  writeCheckpoint,
  type Checkpoint,
} from '../../src/results/checkpoint-file.js';
import { CheckpointError } from '../../src/results/checkpoint-file.js';
import { codeOf } from '../support/error-code.js';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';

function expectCode(action: () => unknown, code: string): void {
  expect(codeOf(action, CheckpointError)).toBe(code);
}

const PLAN = 'a'.repeat(64);
const OTHER_PLAN = 'b'.repeat(64);

/** A hand-made state with every kind of value a method state holds. */
function sample(): Checkpoint {
  const odd = new Float64Array([Number.NaN, -0, Number.POSITIVE_INFINITY, 5e-324, -1.5, 0.1]);
  return {
    state: {
      planHash: PLAN,
      round: 7,
      clock: { elapsedSeconds: 1.25, compensationSeconds: -2.7755575615628914e-17 },
      wallSeconds: 0.5,
      bound: { normMax: 3.5e12, suboptimalityMax: 1e12 },
      server: {
        methodState: {
          dim: 6,
          model: odd,
          joined: Uint8Array.from([1, 0, 1]),
          innerStepSize: -0,
          ratio: Number.NaN,
          ready: true,
        },
        downlinkReplicas: [{ model: Float64Array.from([1, 2, 3, 4, 5, 6]) }, {}],
        uplinkReplicas: [{}, { gradient: new Float64Array(6).fill(0.3) }],
      },
      clients: [
        { clientId: 0, methodState: { z: odd }, uplinkMemories: {}, downlinkReplicas: {} },
        { clientId: 1, methodState: null, uplinkMemories: {}, downlinkReplicas: {} },
      ],
    },
    records: { roundsBytes: 1234, clientsBytes: 56789 },
  };
}

function bits(x: Float64Array): string {
  return Buffer.from(x.buffer, x.byteOffset, x.byteLength).toString('hex');
}

describe('checkpoint file', () => {
  it('round-trips every value bit for bit, with the vectors 8-byte aligned', () => {
    const bytes = encodeCheckpoint(sample());
    const buffer = Buffer.from(bytes);
    expect(buffer.subarray(0, 8).toString('ascii')).toBe('rwcheck\n');
    expect(buffer.readUInt32LE(8)).toBe(CHECKPOINT_FORMAT_VERSION);
    const dataStart = bytes.byteLength - 8 * (6 + 6 + 6 + 6);
    expect(dataStart % 8).toBe(0);
    const decoded = decodeCheckpoint(bytes, PLAN, 'x');
    const original = sample();
    expect(decoded.records).toEqual(original.records);
    expect(decoded.state.round).toBe(7);
    expect(Object.is(decoded.state.clock.compensationSeconds, original.state.clock.compensationSeconds)).toBe(true);
    const server = decoded.state.server.methodState as Record<string, unknown>;
    expect(bits(server.model as Float64Array)).toBe(bits((original.state.server.methodState as { model: Float64Array }).model));
    expect(Object.is(server.innerStepSize, -0)).toBe(true);
    expect(Number.isNaN(server.ratio)).toBe(true);
    expect(server.joined).toEqual(Uint8Array.from([1, 0, 1]));
    expect(server.ready).toBe(true);
    expect(decoded.state.server.uplinkReplicas[1].gradient).toEqual(new Float64Array(6).fill(0.3));
    expect(decoded.state.clients[1].methodState).toBeNull();
  });

  it('is written atomically, leaving no temporary file, and read back from the folder', () => {
    const dir = mkdtempSync(join(tmpdir(), 'roundwire-checkpoint-'));
    const scenario = scenarioFromText(
      readFileSync(new URL('../../scenarios/quickstart.yaml', import.meta.url), 'utf8'),
      'quickstart.yaml',
    );
    writeCheckpoint(dir, sample(), scenario);
    writeCheckpoint(dir, sample(), scenario);
    expect(readdirSync(dir).sort()).toEqual([CHECKPOINT_FILE, 'resolved-scenario.yaml']);
    expect(readCheckpoint(dir, PLAN).state.round).toBe(7);
  });

  it('refuses a missing file, another plan, another version and every kind of damage, each with its code', () => {
    const dir = mkdtempSync(join(tmpdir(), 'roundwire-checkpoint-'));
    expectCode(() => readCheckpoint(dir, PLAN), 'E_CHECKPOINT_MISSING');
    const bytes = Buffer.from(encodeCheckpoint(sample()));
    expectCode(() => decodeCheckpoint(bytes, OTHER_PLAN, 'x'), 'E_CHECKPOINT_PLAN');

    const version = Buffer.from(bytes);
    version.writeUInt32LE(CHECKPOINT_FORMAT_VERSION + 1, 8);
    expectCode(() => decodeCheckpoint(version, PLAN, 'x'), 'E_CHECKPOINT_VERSION');

    for (const cut of [0, 10, 40, bytes.byteLength - 8, bytes.byteLength - 1])
      expectCode(() => decodeCheckpoint(bytes.subarray(0, cut), PLAN, 'x'), 'E_CHECKPOINT_DAMAGED');
    expectCode(
      () => decodeCheckpoint(Buffer.concat([bytes, Buffer.alloc(8)]), PLAN, 'x'),
      'E_CHECKPOINT_DAMAGED',
    );
    const flipped = Buffer.from(bytes);
    flipped[flipped.byteLength - 3] ^= 0x10;
    expectCode(() => decodeCheckpoint(flipped, PLAN, 'x'), 'E_CHECKPOINT_DAMAGED');
    const notOurs = Buffer.from(bytes);
    notOurs.write('PK', 0, 'ascii');
    expectCode(() => decodeCheckpoint(notOurs, PLAN, 'x'), 'E_CHECKPOINT_DAMAGED');

    writeFileSync(join(dir, CHECKPOINT_FILE), bytes.subarray(0, 100));
    expect(() => readCheckpoint(dir, PLAN)).toThrow(/checkpoint\.bin: damaged checkpoint \(cut short/);
    expect(readFileSync(join(dir, CHECKPOINT_FILE)).byteLength).toBe(100);
  });
});
