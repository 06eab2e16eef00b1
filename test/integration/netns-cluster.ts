// A coordinator and workers on separate network stacks of this machine: one network namespace
// each, every worker joined to the coordinator's namespace by a veth pair of its own (a
// point-to-point link, 10.213.<i+1>.0/24: the coordinator end .1, the worker end .2). Traffic
// between them crosses real interfaces, so a token-bucket filter (tc tbf) on a worker's end
// shapes its uplink, and taking an end down cuts its link. The processes run the command lines
// and environment of the Kubernetes manifests (manifest-commands.ts).
//
// Names carry this process's pid and a counter, so runs side by side never meet; destroy() kills
// the processes and deletes the namespaces, which takes their veth pairs and qdiscs with them.
// DEVELOPERS.md says how to clean up by hand after a killed test.

import { execFileSync } from 'node:child_process';
import { chmodSync, mkdirSync, mkdtempSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { randomBytes } from 'node:crypto';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { CliProcess } from './cli-process.js';
import { coordinatorService, localCommand } from './manifest-commands.js';

/** First two octets of every address the harness gives; private (RFC 1918 section 3). */
const SUBNET_PREFIX = '10.213';
/** Name prefix of every namespace the harness creates: `ip netns list | grep ^rwt` finds them. */
export const NAMESPACE_PREFIX = 'rwt';

let clustersMade = 0;

function ip(...args: string[]): string {
  return execFileSync('ip', args, { encoding: 'utf8', stdio: ['ignore', 'pipe', 'pipe'] });
}

function inNamespace(namespace: string, ...command: string[]): string {
  return ip('netns', 'exec', namespace, ...command);
}

/**
 * Null where this process may create network namespaces, else why not (the tests skip with it).
 * Tries it for real: being root is not enough in a container without CAP_NET_ADMIN.
 */
export function namespacesRefused(): string | null {
  if (process.platform !== 'linux')
    return `network namespaces are Linux's; this is ${process.platform}`;
  const probe = `${NAMESPACE_PREFIX}${process.pid}probe`;
  try {
    ip('netns', 'add', probe);
  } catch (error) {
    if ((error as NodeJS.ErrnoException).code === 'ENOENT')
      return 'ip (Debian package iproute2) is not installed; .ci/run installs it';
    return `the kernel refused a network namespace (ip netns add: ${String((error as Error).message).trim()}); run as root with CAP_NET_ADMIN`;
  }
  ip('netns', 'del', probe);
  return null;
}

export interface ClusterOptions {
  workers: number;
  /** the scenario the coordinator runs (the ConfigMap's scenario.yaml) */
  scenarioYaml: string;
  /** arguments after the manifest's own, for what a test needs bounded (e.g. a silence limit) */
  extraCoordinatorArgs?: readonly string[];
}

export class NetnsCluster {
  readonly workerCount: number;
  private readonly name: string;
  private readonly root: string;
  private readonly namespaces: string[] = [];
  private readonly processes: CliProcess[] = [];
  coordinator: CliProcess | null = null;
  workers: CliProcess[] = [];
  private readonly resultsDir: string;

  /** Makes the namespaces and links (no process yet); on failure, removes what it made. */
  constructor(options: ClusterOptions) {
    if (options.workers < 1 || options.workers > 9)
      throw new RangeError(`1 to 9 workers, got ${options.workers}`);
    this.workerCount = options.workers;
    clustersMade += 1;
    this.name = `${NAMESPACE_PREFIX}${process.pid}n${clustersMade}`;
    this.root = mkdtempSync(join(tmpdir(), 'roundwire-netns-'));
    try {
      this.makeNetwork();
      this.resultsDir = this.writeCoordinatorVolumes(options.scenarioYaml);
    } catch (error) {
      this.destroy();
      throw error;
    }
    this.options = options;
  }

  private readonly options: ClusterOptions;

  private get coordinatorNamespace(): string {
    return `${this.name}c`;
  }

  private workerNamespace(i: number): string {
    return `${this.name}w${i}`;
  }

  /** The worker end of worker i's link, in its own namespace. */
  workerDevice(i: number): string {
    return `${this.name}w${i}`;
  }

  /** The coordinator's address on worker i's link. */
  coordinatorAddress(i: number): string {
    return `${SUBNET_PREFIX}.${i + 1}.1`;
  }

  private makeNetwork(): void {
    for (const ns of [
      this.coordinatorNamespace,
      ...Array.from({ length: this.workerCount }, (_, i) => this.workerNamespace(i)),
    ]) {
      ip('netns', 'add', ns);
      this.namespaces.push(ns);
      inNamespace(ns, 'ip', 'link', 'set', 'lo', 'up');
    }
    for (let i = 0; i < this.workerCount; i++) {
      const coordinatorEnd = `${this.name}c${i}`;
      // Both ends are made inside their namespaces: nothing of it ever sits in the host's.
      ip(
        'link',
        'add',
        coordinatorEnd,
        'netns',
        this.coordinatorNamespace,
        'type',
        'veth',
        'peer',
        'name',
        this.workerDevice(i),
        'netns',
        this.workerNamespace(i),
      );
      const subnet = `${SUBNET_PREFIX}.${i + 1}`;
      inNamespace(
        this.coordinatorNamespace,
        'ip',
        'addr',
        'add',
        `${subnet}.1/24`,
        'dev',
        coordinatorEnd,
      );
      inNamespace(this.coordinatorNamespace, 'ip', 'link', 'set', coordinatorEnd, 'up');
      inNamespace(
        this.workerNamespace(i),
        'ip',
        'addr',
        'add',
        `${subnet}.2/24`,
        'dev',
        this.workerDevice(i),
      );
      inNamespace(this.workerNamespace(i), 'ip', 'link', 'set', this.workerDevice(i), 'up');
    }
  }

  /** The key as the key-copy init container leaves it: the process user's own, mode 0600. */
  private writeKey(keyFolder: string): void {
    mkdirSync(keyFolder, { recursive: true });
    const file = join(keyFolder, 'key');
    writeFileSync(file, this.key);
    chmodSync(file, 0o600);
  }

  private readonly key = randomBytes(32).toString('hex');

  private writeCoordinatorVolumes(scenarioYaml: string): string {
    const command = localCommand('coordinator.yaml', 'coordinator', join(this.root, 'coordinator'));
    mkdirSync(command.volumes.scenario, { recursive: true });
    writeFileSync(join(command.volumes.scenario, 'scenario.yaml'), scenarioYaml);
    this.writeKey(command.volumes.key);
    mkdirSync(command.volumes.results, { recursive: true });
    return command.volumes.results;
  }

  /** The oracle's cache: the test run's own (test/support/cache-dir-setup.ts), shared by every test. */
  private cacheEnv(env: Record<string, string>): Record<string, string> {
    const shared = process.env.ROUNDWIRE_CACHE_DIR;
    return shared === undefined || env.ROUNDWIRE_CACHE_DIR === undefined
      ? env
      : { ...env, ROUNDWIRE_CACHE_DIR: shared };
  }

  /**
   * The coordinator, as coordinator.yaml runs it: its --workers-min is this cluster's worker
   * count (the manifest keeps it equal to the workers' parallelism), and --metrics-linger 0 (no
   * scraper here waits for the final values).
   */
  startCoordinator(): CliProcess {
    const command = localCommand(
      'coordinator.yaml',
      'coordinator',
      join(this.root, 'coordinator'),
      {
        '--workers-min': String(this.workerCount),
        '--metrics-linger': '0',
      },
    );
    const process = new CliProcess(
      [...command.args, ...(this.options.extraCoordinatorArgs ?? [])],
      this.cacheEnv(command.env),
      command.workdir,
      ['ip', 'netns', 'exec', this.coordinatorNamespace],
    );
    this.processes.push(process);
    this.coordinator = process;
    return process;
  }

  /** Every worker, as workers.yaml runs it, joining by the coordinator's address on its link. */
  startWorkers(): CliProcess[] {
    const service = coordinatorService();
    this.workers = Array.from({ length: this.workerCount }, (_, i) => {
      const root = join(this.root, `worker-${i}`);
      const command = localCommand('workers.yaml', 'worker', root, { '--metrics-linger': '0' });
      this.writeKey(command.volumes.key);
      mkdirSync(command.workdir, { recursive: true });
      const args = command.args.map((a) =>
        a.replace(
          `//${service.name}:${service.port}`,
          `//${this.coordinatorAddress(i)}:${service.port}`,
        ),
      );
      const process = new CliProcess(args, this.cacheEnv(command.env), command.workdir, [
        'ip',
        'netns',
        'exec',
        this.workerNamespace(i),
      ]);
      this.processes.push(process);
      return process;
    });
    return this.workers;
  }

  /** The clients worker i hosts (it says so once dealt them; joining order decides which). */
  async hostedClients(i: number, timeoutMs: number): Promise<number[]> {
    const match = await this.workers[i].waitForStderr(/hosting clients ([\d, ]+) of/, timeoutMs);
    return match[1].split(', ').map(Number);
  }

  /** Shapes worker i's uplink (its end's egress) to `bytesPerSecond` with a token bucket. */
  shapeUplink(i: number, bytesPerSecond: number, burstBytes: number): void {
    inNamespace(
      this.workerNamespace(i),
      'tc',
      'qdisc',
      'add',
      'dev',
      this.workerDevice(i),
      'root',
      'tbf',
      'rate',
      `${bytesPerSecond * 8}bit`,
      'burst',
      String(burstBytes),
      // A queue of two seconds at the rate: the sender's TCP is held back, never dropped.
      'latency',
      '2s',
    );
  }

  /** Takes worker i's link down or brings it up (its own end). */
  setLink(i: number, up: boolean): void {
    inNamespace(
      this.workerNamespace(i),
      'ip',
      'link',
      'set',
      this.workerDevice(i),
      up ? 'up' : 'down',
    );
  }

  /** The coordinator's results folder, once it has made one. */
  resultsFolder(): string | null {
    const folders = readdirSync(this.resultsDir);
    return folders.length === 0 ? null : join(this.resultsDir, folders[0]);
  }

  /** Stops every process and removes every namespace (and so every veth and qdisc); idempotent. */
  destroy(): void {
    for (const p of this.processes) p.kill();
    for (const ns of this.namespaces.splice(0)) {
      try {
        ip('netns', 'del', ns);
      } catch {
        // Already gone: removed by hand, or never fully made.
      }
    }
    rmSync(this.root, { recursive: true, force: true });
  }
}
