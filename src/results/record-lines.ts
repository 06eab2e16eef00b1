// Reads rounds.jsonl back one record at a time, in fixed-size chunks, so that the summary of a
// run of any length is built from the file with memory bounded by the longest line, never by
// the file (a file past V8's longest string, about 512 MiB, could not be read whole).

import { closeSync, openSync, readSync } from 'node:fs';
import { join } from 'node:path';
import { roundRecordSchema, type RoundRecord } from '../engine/round-record.js';
import { ResultsFolderError, resultFiles } from './results-folder.js';

/** Bytes read at a time: large enough that a read costs little per line (common practice). */
const READ_CHUNK_BYTES = 1 << 20;

/**
 * The lines of `path` without their line breaks, read chunk by chunk: empty lines included (so
 * that a reader can name a line by its number), none after a final line break.
 */
export function* readLines(path: string): Generator<string, void, undefined> {
  let fd: number;
  try {
    fd = openSync(path, 'r');
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code ?? (error as Error).message;
    throw new ResultsFolderError('E_RESULTS_FOLDER', `${path}: cannot read it (${code})`);
  }
  try {
    const chunk = Buffer.alloc(READ_CHUNK_BYTES);
    // Bytes of a line cut by the chunk's end wait here: a UTF-8 character may straddle chunks.
    let pending: Buffer[] = [];
    for (;;) {
      const read = readSync(fd, chunk, 0, chunk.length, null);
      if (read === 0) break;
      let start = 0;
      for (let end = chunk.indexOf(10, start); end !== -1 && end < read; end = chunk.indexOf(10, start)) {
        pending.push(chunk.subarray(start, end));
        const line = Buffer.concat(pending).toString('utf8');
        pending = [];
        start = end + 1;
        yield line;
      }
      if (start < read) pending.push(Buffer.from(chunk.subarray(start, read)));
    }
    const last = Buffer.concat(pending).toString('utf8');
    if (last.length > 0) yield last;
  } finally {
    closeSync(fd);
  }
}

/** The records of `folder`/rounds.jsonl, in file order. */
export function* readRoundRecords(folder: string): Generator<RoundRecord, void, undefined> {
  const path = join(folder, resultFiles.rounds);
  let lineNumber = 0;
  for (const line of readLines(path)) {
    lineNumber++;
    if (line.trim() === '') continue;
    let json: unknown;
    try {
      json = JSON.parse(line);
    } catch {
      throw new ResultsFolderError('E_RESULTS_FOLDER', `${path}: line ${lineNumber} is not JSON`);
    }
    const parsed = roundRecordSchema.safeParse(json);
    if (!parsed.success)
      throw new ResultsFolderError(
        'E_RESULTS_FOLDER',
        `${path}: line ${lineNumber} is not a round record (${parsed.error.issues[0]?.path.join('.') || 'line'}: ${parsed.error.issues[0]?.message ?? 'invalid'})`,
      );
    const record: RoundRecord = parsed.data;
    yield record;
  }
}
