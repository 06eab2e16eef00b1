// `roundwire worker --join URL --token T --slots N [--name NAME]`: a worker process. The token
// may come from ROUNDWIRE_TOKEN instead, so that it does not show in ps.

import { hostname } from 'node:os';
import { Worker, type WorkerExit } from '../../client/worker.js';

export interface WorkerCommandOptions {
  join: string;
  token?: string;
  slots: string;
  name?: string;
}

/** Environment variable a worker reads its token from when --token is absent. */
export const TOKEN_ENVIRONMENT_VARIABLE = 'ROUNDWIRE_TOKEN';

/** Most clients one worker offers to host; the scenario schema allows 10,000 clients in all. */
export const WORKER_SLOTS_MAX = 10_000;

/** Returns a problem with the options, or null when they are usable. */
export function workerOptionsProblem(opts: WorkerCommandOptions, env: NodeJS.ProcessEnv): string | null {
  if (!/^wss?:\/\//.test(opts.join)) return `--join: expected ws://HOST:PORT or wss://HOST:PORT, got "${opts.join}"`;
  const slots = Number(opts.slots);
  if (!Number.isInteger(slots) || slots < 1 || slots > WORKER_SLOTS_MAX) return `--slots: expected an integer from 1 to ${WORKER_SLOTS_MAX}, got "${opts.slots}"`;
  const token = opts.token ?? env[TOKEN_ENVIRONMENT_VARIABLE];
  if (token === undefined || token === '') return `a token is needed: --token T or the ${TOKEN_ENVIRONMENT_VARIABLE} environment variable`;
  return null;
}

export async function runWorkerCommand(opts: WorkerCommandOptions, env: NodeJS.ProcessEnv, err: (text: string) => void): Promise<WorkerExit> {
  const workerName = opts.name ?? `${hostname()}-${process.pid}`;
  const worker = new Worker({
    url: opts.join,
    token: (opts.token ?? env[TOKEN_ENVIRONMENT_VARIABLE]) as string,
    slots: Number(opts.slots),
    workerName,
    threadsMax: Number(opts.slots),
    log: (line) => err(`worker ${workerName}: ${line}\n`),
  });
  const onSignal = (): void => {
    void worker.stop().then(() => process.exit(130));
  };
  process.once('SIGINT', onSignal);
  process.once('SIGTERM', onSignal);
  try {
    return await worker.run();
  } finally {
    process.off('SIGINT', onSignal);
    process.off('SIGTERM', onSignal);
  }
}
