// A roundwire command started as a real child process whose output a test can watch while it
// runs (wait for a line, read pids), with every wait bounded and the process stopped after.

import { spawn, type ChildProcess } from 'node:child_process';
import { chmodSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';

export const repoRoot = fileURLToPath(new URL('../../', import.meta.url));
const bin = fileURLToPath(new URL('../../bin/roundwire.js', import.meta.url));

export class CliProcess {
  readonly child: ChildProcess;
  stdout = '';
  stderr = '';
  readonly exited: Promise<{ code: number | null; signal: NodeJS.Signals | null }>;
  private readonly watchers: (() => void)[] = [];

  /** `launcher` goes before node, e.g. `ip netns exec NAME` to start it in a network namespace. */
  constructor(
    args: string[],
    env: NodeJS.ProcessEnv = {},
    cwd: string = repoRoot,
    launcher: readonly string[] = [],
  ) {
    const [command, ...rest] = [...launcher, process.execPath, bin, ...args];
    this.child = spawn(command, rest, {
      cwd,
      env: { ...process.env, NO_COLOR: '1', ...env },
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    this.child.stdout!.setEncoding('utf8').on('data', (t: string) => {
      this.stdout += t;
      this.notify();
    });
    this.child.stderr!.setEncoding('utf8').on('data', (t: string) => {
      this.stderr += t;
      this.notify();
    });
    this.exited = new Promise((resolve) =>
      this.child.once('exit', (code, signal) => resolve({ code, signal })),
    );
  }

  private notify(): void {
    for (const w of [...this.watchers]) w();
  }

  /** Resolves to the first match of `pattern` in stderr, waiting at most `timeoutMs`. */
  waitForStderr(pattern: RegExp, timeoutMs: number): Promise<RegExpMatchArray> {
    return new Promise((resolve, reject) => {
      const check = (): boolean => {
        const match = this.stderr.match(pattern);
        if (match === null) return false;
        clearTimeout(timer);
        this.watchers.splice(this.watchers.indexOf(watcher), 1);
        resolve(match);
        return true;
      };
      const watcher = (): void => void check();
      const timer = setTimeout(() => {
        this.watchers.splice(this.watchers.indexOf(watcher), 1);
        reject(
          new Error(
            `no ${pattern} in stderr within ${timeoutMs} ms; stderr so far:\n${this.stderr}`,
          ),
        );
      }, timeoutMs);
      this.watchers.push(watcher);
      check();
    });
  }

  /** Resolves to the exit, or kills the process and rejects after `timeoutMs`. */
  async exit(timeoutMs: number): Promise<{ code: number | null; signal: NodeJS.Signals | null }> {
    let timer: NodeJS.Timeout | undefined;
    const timeout = new Promise<never>((_, reject) => {
      timer = setTimeout(() => {
        this.child.kill('SIGKILL');
        reject(new Error(`still running after ${timeoutMs} ms; stderr:\n${this.stderr}`));
      }, timeoutMs);
    });
    try {
      return await Promise.race([this.exited, timeout]);
    } finally {
      clearTimeout(timer);
    }
  }

  /** Pids of the local workers `roundwire run` reported starting. */
  workerPids(): number[] {
    return [...this.stderr.matchAll(/started worker \S+ \(pid (\d+)\)/g)].map((m) => Number(m[1]));
  }

  kill(): void {
    if (this.child.exitCode === null && this.child.signalCode === null) this.child.kill('SIGKILL');
  }
}

export function isAlive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch {
    return false;
  }
}

/** Waits (bounded) until none of the pids is alive; resolves to those still alive at the end. */
export async function survivorsAfter(
  pids: readonly number[],
  timeoutMs: number,
): Promise<number[]> {
  const deadline = Date.now() + timeoutMs;
  for (;;) {
    const alive = pids.filter(isAlive);
    if (alive.length === 0 || Date.now() > deadline) return alive;
    await new Promise((r) => setTimeout(r, 50));
  }
}

export function freshDir(prefix: string): string {
  return mkdtempSync(join(tmpdir(), `roundwire-${prefix}-`));
}

export function readJsonLines<T>(file: string): T[] {
  return readFileSync(file, 'utf8')
    .split('\n')
    .filter((l) => l.length > 0)
    .map((l) => JSON.parse(l) as T);
}

/**
 * Writes `key` (and a line break, as an editor or `echo` leaves one) into `dir/name`, with
 * `mode` applied past the umask; returns the path. The default mode is the private one a key
 * file needs.
 */
export function writeKeyFile(dir: string, key: string, name = 'shared.key', mode = 0o600): string {
  const file = join(dir, name);
  writeFileSync(file, `${key}\n`);
  chmodSync(file, mode);
  return file;
}

/** Command-line arguments that tweak scenario fields (path -> YAML value): the one place that knows the flag's syntax. */
export function overrideArgs(overrides: Readonly<Record<string, string>>): string[] {
  return Object.entries(overrides).flatMap(([path, value]) => ['--tweak', `${path}:${value}`]);
}

/**
 * Arguments of a `roundwire coordinator` on the quickstart scenario, listening on 127.0.0.1 with
 * a free port and `keyFile`, waiting up to 40 s for `workersMin` workers, writing to `out`;
 * `extra` follows (tweaks, limits).
 */
export function quickstartCoordinatorArgs(
  out: string,
  keyFile: string,
  workersMin: number,
  extra: readonly string[] = [],
): string[] {
  return [
    'coordinator',
    join(repoRoot, 'scenarios/quickstart.yaml'),
    '--listen',
    '127.0.0.1:0',
    '--key-file',
    keyFile,
    '--workers-min',
    String(workersMin),
    '--workers-wait-seconds',
    '40',
    '--out',
    out,
    ...extra,
  ];
}

/** `count` honest workers named honest-1, honest-2, ..., each offering `capacity` clients. */
export function honestWorkers(
  url: string,
  keyFile: string,
  count: number,
  capacity = 4,
): CliProcess[] {
  return Array.from(
    { length: count },
    (_, i) =>
      new CliProcess([
        'worker',
        url,
        '--key-file',
        keyFile,
        '--capacity',
        String(capacity),
        '--name',
        `honest-${i + 1}`,
      ]),
  );
}
