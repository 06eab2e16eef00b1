// rounds.jsonl and clients.jsonl written as the rounds happen: one line per round, one line per
// client per exchange, appended at the end of each round with one write per file, so that a run
// keeps nothing in memory that grows with its rounds and a crash loses at most the round in
// progress. Synchronous on purpose: the in-process engine drives its walk synchronously, and a
// round's lines are on disk before the next round starts. The line format is README.md's
// ("Results folder"): one JSON object per line, keys in the records' order.

import { closeSync, fsyncSync, ftruncateSync, fstatSync, mkdirSync, openSync, writeSync } from 'node:fs';
import { join } from 'node:path';
import type { ClientRoundRecord, RecordSink, RoundRecord } from '../engine/round-record.js';
import { ResultsFolderError, resultFiles } from './results-folder.js';

/** Byte lengths of rounds.jsonl and clients.jsonl after everything appended so far. */
export interface RecordOffsets {
  roundsBytes: number;
  clientsBytes: number;
}

/** An open file and the bytes appended to it so far. */
interface AppendFile {
  path: string;
  fd: number;
  bytes: number;
}

function openAppend(path: string, truncateTo: number, flags: 'w' | 'r+'): AppendFile {
  try {
    const fd = openSync(path, flags);
    if (flags === 'r+') {
      const length = fstatSync(fd).size;
      if (length < truncateTo) {
        closeSync(fd);
        throw new ResultsFolderError(
          'E_RESULTS_FOLDER',
          `${path}: holds ${length} bytes, fewer than the ${truncateTo} to resume from`,
        );
      }
      ftruncateSync(fd, truncateTo);
    }
    return { path, fd, bytes: truncateTo };
  } catch (error) {
    if (error instanceof ResultsFolderError) throw error;
    const code = (error as NodeJS.ErrnoException).code ?? (error as Error).message;
    throw new ResultsFolderError('E_RESULTS_FOLDER', `${path}: cannot open it for writing (${code})`);
  }
}

function writeAll(file: AppendFile, text: string): void {
  const buffer = Buffer.from(text, 'utf8');
  // writeSync may write less than asked (a full disk, a signal); the rest follows at the offset.
  let written = 0;
  while (written < buffer.length)
    written += writeSync(file.fd, buffer, written, buffer.length - written, file.bytes + written);
  file.bytes += buffer.length;
}

export class RecordStream implements RecordSink {
  private readonly rounds: AppendFile;
  private readonly clients: AppendFile;
  private closed = false;

  private constructor(rounds: AppendFile, clients: AppendFile) {
    this.rounds = rounds;
    this.clients = clients;
  }

  /** Creates (truncating) rounds.jsonl and clients.jsonl in `folder`. */
  static create(folder: string): RecordStream {
    try {
      mkdirSync(folder, { recursive: true });
    } catch (error) {
      const code = (error as NodeJS.ErrnoException).code ?? (error as Error).message;
      throw new ResultsFolderError('E_RESULTS_FOLDER', `${folder}: cannot create the results folder (${code})`);
    }
    const rounds = openAppend(join(folder, resultFiles.rounds), 0, 'w');
    try {
      return new RecordStream(rounds, openAppend(join(folder, resultFiles.clients), 0, 'w'));
    } catch (error) {
      closeSync(rounds.fd);
      throw error;
    }
  }

  /** Reopens both files, truncates them to `offsets` (a checkpoint's), and appends from there. */
  static reopen(folder: string, offsets: RecordOffsets): RecordStream {
    const rounds = openAppend(join(folder, resultFiles.rounds), offsets.roundsBytes, 'r+');
    try {
      return new RecordStream(
        rounds,
        openAppend(join(folder, resultFiles.clients), offsets.clientsBytes, 'r+'),
      );
    } catch (error) {
      closeSync(rounds.fd);
      throw error;
    }
  }

  /** Appends one round's line and its clients' lines (fs.writeSync, one write per file). */
  append(record: RoundRecord, clients: readonly ClientRoundRecord[]): void {
    if (this.closed) throw new Error('RecordStream.append: the stream is closed');
    writeAll(this.rounds, `${JSON.stringify(record)}\n`);
    if (clients.length === 0) return;
    let lines = '';
    for (const client of clients) lines += `${JSON.stringify(client)}\n`;
    writeAll(this.clients, lines);
  }

  offsets(): RecordOffsets {
    return { roundsBytes: this.rounds.bytes, clientsBytes: this.clients.bytes };
  }

  /** fsync both files (a checkpoint calls this before it records the offsets). */
  sync(): void {
    fsyncSync(this.rounds.fd);
    fsyncSync(this.clients.fd);
  }

  close(): void {
    if (this.closed) return;
    this.closed = true;
    closeSync(this.rounds.fd);
    closeSync(this.clients.fd);
  }
}

/**
 * A RecordStream created in `folder` only when a run starts (open), so that a run refused or
 * abandoned before its first round leaves no folder behind; close() closes it if it was opened.
 */
export class DeferredRecordStream {
  private readonly folder: string;
  private stream: RecordStream | null = null;

  constructor(folder: string) {
    this.folder = folder;
  }

  open(): RecordStream {
    this.stream ??= RecordStream.create(this.folder);
    return this.stream;
  }

  close(): void {
    this.stream?.close();
  }
}
