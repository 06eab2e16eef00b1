// Worker processes on this machine for `roundwire run`: each is `node bin/roundwire.js worker`,
// pointed at the run's key file (the path is no secret; the key never reaches a command line or
// an environment). They start before the coordinator has prepared the run (the oracle's solve
// takes seconds on a large problem) and read its URL from their standard input once it listens
// (`worker -`), so that starting Node and loading the code overlaps that work; a worker whose
// parent is gone reads the end of its input and exits. They are stopped with the run whatever
// way it ends; a process exit hook kills any still running.

import { spawn, type ChildProcess } from 'node:child_process';
import { existsSync } from 'node:fs';
import { fileURLToPath } from 'node:url';

/** A local worker; its coordinator's URL comes later, through coordinatorAt. */
export interface LocalWorkerSpec {
  /** the file holding the shared key, private to this user */
  keyFile: string;
  /** clients the worker offers to host */
  capacity: number;
  workerName: string;
  /** the worker's --coordinator-wait-seconds */
  coordinatorWaitSeconds: number;
  /** the worker's --reconnect-wait-seconds */
  reconnectWaitSeconds: number;
}

/** Lines of a worker's standard error kept to show when the run fails. */
const STDERR_LINES_KEPT = 40;
/** After SIGTERM, a worker gets this long to exit before SIGKILL. */
const TERMINATE_GRACE_MS = 3000;

/** The command-line entry point, found by walking up from this file (it runs from src or dist). */
export function binPath(): string {
  let folder = new URL('.', import.meta.url);
  for (let depth = 0; depth < 6; depth++) {
    const candidate = new URL('bin/roundwire.js', folder);
    if (existsSync(candidate)) return fileURLToPath(candidate);
    folder = new URL('../', folder);
  }
  throw new Error('bin/roundwire.js not found above the server folder');
}

export class LocalWorker {
  readonly spec: LocalWorkerSpec;
  readonly child: ChildProcess;
  readonly exited: Promise<number | null>;
  private readonly stderrLines: string[] = [];
  private exitCode: number | null | undefined = undefined;

  constructor(spec: LocalWorkerSpec) {
    this.spec = spec;
    this.child = spawn(
      process.execPath,
      [
        binPath(),
        'worker',
        '-',
        '--key-file',
        spec.keyFile,
        '--capacity',
        String(spec.capacity),
        '--name',
        spec.workerName,
        '--coordinator-wait-seconds',
        String(spec.coordinatorWaitSeconds),
        '--reconnect-wait-seconds',
        String(spec.reconnectWaitSeconds),
      ],
      {
        stdio: ['pipe', 'ignore', 'pipe'],
        // Its own process group: a Ctrl-C at the terminal reaches the run, which lets the round
        // in progress finish with its workers and takes a checkpoint before it stops them.
        detached: true,
      },
    );
    let partial = '';
    this.child.stderr!.setEncoding('utf8');
    this.child.stderr!.on('data', (text: string) => {
      const lines = (partial + text).split('\n');
      partial = lines.pop() ?? '';
      this.stderrLines.push(...lines);
      if (this.stderrLines.length > STDERR_LINES_KEPT)
        this.stderrLines.splice(0, this.stderrLines.length - STDERR_LINES_KEPT);
    });
    this.exited = new Promise((resolve) => {
      this.child.once('exit', (code) => {
        this.exitCode = code;
        resolve(code);
      });
      this.child.once('error', () => {
        this.exitCode = null;
        resolve(null);
      });
    });
  }

  /** Tells the worker where its coordinator listens, on its standard input (once). */
  coordinatorAt(url: string): void {
    const stdin = this.child.stdin!;
    // A worker that already exited closed its end: the write fails and its exit says why.
    stdin.on('error', () => undefined);
    stdin.end(`${url}\n`);
  }

  isRunning(): boolean {
    return this.exitCode === undefined;
  }

  recentStderr(): string[] {
    return [...this.stderrLines];
  }

  /** Resolves to true if the process exits by itself within `seconds`. */
  async exitsWithin(seconds: number): Promise<boolean> {
    if (!this.isRunning()) return true;
    let timer: NodeJS.Timeout | undefined;
    const timeout = new Promise<false>((resolve) => {
      timer = setTimeout(() => resolve(false), seconds * 1000);
    });
    const exited = await Promise.race([this.exited.then(() => true as const), timeout]);
    clearTimeout(timer);
    return exited;
  }

  /** SIGTERM, then SIGKILL after a grace period; resolves once the process is gone. */
  async stop(): Promise<void> {
    if (!this.isRunning()) return;
    this.child.kill('SIGTERM');
    const timer = setTimeout(() => this.child.kill('SIGKILL'), TERMINATE_GRACE_MS);
    await this.exited;
    clearTimeout(timer);
  }

  /** Synchronous last resort (process exit hook). */
  killNow(): void {
    if (this.isRunning()) this.child.kill('SIGKILL');
  }
}
