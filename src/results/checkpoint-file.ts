// checkpoint.bin in a results folder: everything a run needs to go on after a round (RunState:
// the walk's point, the server's and every client's state) and the byte lengths of the records
// files at that round. Layout, all integers little-endian:
//
//   bytes 0-7     magic, the ASCII text "rwcheck\n"
//   bytes 8-11    format version (CHECKPOINT_FORMAT_VERSION), uint32
//   bytes 12-15   header length H in bytes, uint32
//   bytes 16..    header: UTF-8 JSON {planHash, records, vectorCount, vectorsSha256, state}
//                 where state is the RunState's tree (src/engine/state-tree.ts)
//   then          zero bytes up to the next multiple of 8, so the vectors are 8-byte aligned
//   then          the tree's vectors, one after another, as float64 values
//
// The file is written whole to a temporary file in the same folder, flushed to the disk
// (fsync), renamed over checkpoint.bin and the folder flushed in turn, so that a crash at any
// moment leaves either the old checkpoint or the new one, never a mix. Reading checks the magic,
// the version, the lengths, the SHA-256 of the vectors and the plan hash, each refusal with its
// own code (all exit code 2: a checkpoint is the resume command's input).

import { createHash } from 'node:crypto';
import {
  closeSync,
  fsyncSync,
  openSync,
  readFileSync,
  renameSync,
  rmSync,
  statSync,
  writeSync,
} from 'node:fs';
import { basename, dirname, join } from 'node:path';
import { stringify } from 'yaml';
import { z } from 'zod';
import { CodedError } from '../base/coded-error.js';
import type { Scenario } from '../scenario/schema.js';
import { resultFiles } from './results-folder.js';
import type { RunState } from '../engine/run-state.js';
import {
  flattenState,
  packVectors,
  rebuildState,
  StateTreeError,
  unpackVectors,
  type StateJson,
} from '../base/state-tree.js';

export type CheckpointErrorCode =
  /** no checkpoint file, or it cannot be read */
  | 'E_CHECKPOINT_MISSING'
  /** not a checkpoint, or cut short, or its bytes changed */
  | 'E_CHECKPOINT_DAMAGED'
  /** written by a format version this build does not read */
  | 'E_CHECKPOINT_VERSION'
  /** the checkpoint of another scenario (plan hash) */
  | 'E_CHECKPOINT_PLAN';

export class CheckpointError extends CodedError<CheckpointErrorCode> {}

export const CHECKPOINT_FILE = 'checkpoint.bin';
export const CHECKPOINT_FORMAT_VERSION = 1;

const MAGIC = Buffer.from('rwcheck\n', 'ascii');
const PREFIX_BYTES = 16;
/** A header past this is no header of ours: 10,000 clients' trees take a few megabytes. */
export const CHECKPOINT_HEADER_BYTES_MAX = 256 * 1024 * 1024;

/** Byte lengths of rounds.jsonl and clients.jsonl at the checkpoint's round. */
export interface CheckpointRecords {
  roundsBytes: number;
  clientsBytes: number;
}

export interface Checkpoint {
  state: RunState;
  records: CheckpointRecords;
}

const byteCount = z.number().int().nonnegative().max(Number.MAX_SAFE_INTEGER);

const headerSchema = z.strictObject({
  planHash: z.string().regex(/^[0-9a-f]{64}$/),
  records: z.strictObject({ roundsBytes: byteCount, clientsBytes: byteCount }),
  vectorCount: byteCount,
  vectorsSha256: z.string().regex(/^[0-9a-f]{64}$/),
  state: z.unknown(),
});

const vectorsByName = z.record(z.string(), z.instanceof(Float64Array));

const stateSchema = z.strictObject({
  round: byteCount,
  clock: z.strictObject({
    elapsedSeconds: z.number().nonnegative(),
    compensationSeconds: z.number(),
  }),
  wallSeconds: z.number().nonnegative(),
  bound: z.strictObject({ normMax: z.number().positive(), suboptimalityMax: z.number().positive() }),
  server: z.strictObject({
    methodState: z.unknown(),
    downlinkReplicas: z.array(vectorsByName),
    uplinkReplicas: z.array(vectorsByName),
  }),
  clients: z.array(
    z.strictObject({
      clientId: byteCount,
      methodState: z.unknown(),
      uplinkMemories: vectorsByName,
      downlinkReplicas: vectorsByName,
    }),
  ),
});

function alignedTo8(bytes: number): number {
  return Math.ceil(bytes / 8) * 8;
}

/** The file's bytes for a checkpoint. */
export function encodeCheckpoint(checkpoint: Checkpoint): Uint8Array {
  const { planHash, ...walked } = checkpoint.state;
  const flat = flattenState(walked);
  const vectorBytes = packVectors(flat.vectors);
  const lengths = flat.vectors.map((v) => v.length);
  const header = Buffer.from(
    JSON.stringify({
      planHash,
      records: checkpoint.records,
      vectorCount: flat.vectors.length,
      vectorsSha256: createHash('sha256').update(vectorBytes).digest('hex'),
      state: { tree: flat.tree, lengths },
    }),
    'utf8',
  );
  const dataStart = alignedTo8(PREFIX_BYTES + header.byteLength);
  const out = Buffer.alloc(dataStart + vectorBytes.byteLength);
  MAGIC.copy(out, 0);
  out.writeUInt32LE(CHECKPOINT_FORMAT_VERSION, 8);
  out.writeUInt32LE(header.byteLength, 12);
  header.copy(out, PREFIX_BYTES);
  out.set(vectorBytes, dataStart);
  return out;
}

function damaged(file: string, why: string): CheckpointError {
  return new CheckpointError('E_CHECKPOINT_DAMAGED', `${file}: damaged checkpoint (${why})`);
}

const treeSchema = z.strictObject({
  tree: z.unknown(),
  lengths: z.array(byteCount),
});

/**
 * A checkpoint from its file's bytes, for the plan `planHash`; `file` names it in messages.
 * Throws CheckpointError with the reason: damaged, another version, another plan.
 */
export function decodeCheckpoint(bytes: Uint8Array, planHash: string, file: string): Checkpoint {
  const buffer = Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  if (buffer.byteLength < PREFIX_BYTES || !buffer.subarray(0, 8).equals(MAGIC))
    throw damaged(file, 'not a roundwire checkpoint: its first bytes are not "rwcheck"');
  const version = buffer.readUInt32LE(8);
  if (version !== CHECKPOINT_FORMAT_VERSION)
    throw new CheckpointError(
      'E_CHECKPOINT_VERSION',
      `${file}: checkpoint format version ${version}; this roundwire reads version ${CHECKPOINT_FORMAT_VERSION}`,
    );
  const headerBytes = buffer.readUInt32LE(12);
  if (headerBytes > CHECKPOINT_HEADER_BYTES_MAX || PREFIX_BYTES + headerBytes > buffer.byteLength)
    throw damaged(file, `cut short: its header of ${headerBytes} bytes does not fit its ${buffer.byteLength} bytes`);
  let header: z.infer<typeof headerSchema>;
  try {
    header = headerSchema.parse(
      JSON.parse(buffer.subarray(PREFIX_BYTES, PREFIX_BYTES + headerBytes).toString('utf8')),
    );
  } catch (error) {
    throw damaged(file, `unreadable header: ${(error as Error).message.split('\n')[0]}`);
  }
  if (header.planHash !== planHash)
    throw new CheckpointError(
      'E_CHECKPOINT_PLAN',
      `${file}: the checkpoint of another scenario (plan ${header.planHash.slice(0, 12)}, the folder's resolved-scenario.yaml gives ${planHash.slice(0, 12)})`,
    );
  const tree = treeSchema.safeParse(header.state);
  if (!tree.success || tree.data.lengths.length !== header.vectorCount)
    throw damaged(file, 'its header does not list its vectors');
  const dataStart = alignedTo8(PREFIX_BYTES + headerBytes);
  const valueCount = tree.data.lengths.reduce((n, l) => n + l, 0);
  const expectedBytes = dataStart + valueCount * 8;
  if (buffer.byteLength !== expectedBytes)
    throw damaged(
      file,
      `${buffer.byteLength < expectedBytes ? 'cut short' : 'longer than written'}: ${buffer.byteLength} bytes, ${expectedBytes} expected`,
    );
  const data = buffer.subarray(dataStart);
  if (createHash('sha256').update(data).digest('hex') !== header.vectorsSha256)
    throw damaged(file, 'its vectors do not match their SHA-256');
  const vectors = unpackVectors(data, tree.data.lengths);
  let state: z.infer<typeof stateSchema>;
  try {
    state = stateSchema.parse(rebuildState({ tree: tree.data.tree as StateJson, vectors }));
  } catch (error) {
    const why = error instanceof StateTreeError ? error.message : (error as Error).message.split('\n')[0];
    throw damaged(file, `its state is not a run's: ${why}`);
  }
  return { state: { ...state, planHash }, records: header.records };
}

/** Writes `bytes` to `file` atomically: a temporary file in the same folder, fsync, rename, fsync of the folder. */
export function writeFileAtomically(file: string, bytes: Uint8Array): void {
  const folder = dirname(file);
  const temporary = join(folder, `.${basename(file)}.${process.pid}.tmp`);
  const fd = openSync(temporary, 'w', 0o644);
  try {
    let written = 0;
    while (written < bytes.byteLength)
      written += writeSync(fd, bytes, written, bytes.byteLength - written);
    fsyncSync(fd);
  } catch (error) {
    closeSync(fd);
    rmSync(temporary, { force: true });
    throw error;
  }
  closeSync(fd);
  renameSync(temporary, file);
  const folderFd = openSync(folder, 'r');
  try {
    fsyncSync(folderFd);
  } finally {
    closeSync(folderFd);
  }
}

/**
 * Writes checkpoint.bin into the results folder `dir`, atomically, and the resolved scenario
 * beside it (resolved-scenario.yaml), which `roundwire resume` reads: a run killed before its end
 * has written nothing else.
 */
export function writeCheckpoint(dir: string, checkpoint: Checkpoint, scenario: Scenario): void {
  writeFileAtomically(
    join(dir, resultFiles.resolvedScenario),
    Buffer.from(stringify(scenario), 'utf8'),
  );
  writeFileAtomically(join(dir, CHECKPOINT_FILE), encodeCheckpoint(checkpoint));
}

/** Most bytes a checkpoint file may have: far above any plan's state (the scenario limits memory). */
export const CHECKPOINT_FILE_BYTES_MAX = 16 * 1024 * 1024 * 1024;

/** Reads checkpoint.bin of the results folder `dir` for the plan `planHash`. */
export function readCheckpoint(dir: string, planHash: string): Checkpoint {
  const file = join(dir, CHECKPOINT_FILE);
  let bytes: Uint8Array;
  try {
    const size = statSync(file).size;
    if (size > CHECKPOINT_FILE_BYTES_MAX)
      throw new CheckpointError(
        'E_CHECKPOINT_DAMAGED',
        `${file}: damaged checkpoint (${size} bytes, more than ${CHECKPOINT_FILE_BYTES_MAX})`,
      );
    bytes = readFileSync(file);
  } catch (error) {
    if (error instanceof CheckpointError) throw error;
    throw new CheckpointError(
      'E_CHECKPOINT_MISSING',
      `${file}: no checkpoint to resume from (${(error as NodeJS.ErrnoException).code ?? (error as Error).message})`,
    );
  }
  return decodeCheckpoint(bytes, planHash, file);
}
