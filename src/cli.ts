// The composition root: the command line (commander) wires the core, the coordinator and the
// worker together. The only file in src/ that may import server/ or client/.

import { gapIsToReference } from './report/gap-name.js';
import { Command, CommanderError, InvalidArgumentError, Option } from 'commander';
import { writeFileSync } from 'node:fs';
import { loadScenarioFile } from './scenario/load-scenario.js';
import { scenarioJsonSchema } from './scenario/json-schema.js';
import { exitCodeOf, exitCodes, exitCodesHelp } from './commands/exit-codes.js';
import { formatTheoryReport, theoryReport } from './commands/theory-command.js';
import { writeShards } from './commands/shards-command.js';
import { formatRunSummary } from './commands/run-report.js';
import { runInProcessCheckpointed } from './commands/run-in-process.js';
import { loadRunToResume } from './commands/resume-command.js';
import type { RoundRecord } from './engine/round-record.js';
import { ProgressLine } from './commands/progress.js';
import { defaultResultsDir, prepareResultsFolder } from './results/results-folder.js';
import {
  formatDistributedSummary,
  type DistributedRunResult,
  runDistributed,
  RunInterrupted,
} from './commands/run-distributed.js';
import {
  COORDINATOR_WAIT_SECONDS_MAX,
  RECONNECT_WAIT_SECONDS_MAX,
  readUrlLine,
  runWorkerCommand,
  URL_FROM_STDIN,
  WORKER_CAPACITY_MAX,
  workerOptionsProblem,
  type WorkerCommandOptions,
} from './commands/worker-command.js';
import {
  coordinatorOptionsProblem,
  HEARTBEAT_SILENCE_SECONDS_MAX,
  HEARTBEAT_SILENCE_SECONDS_MIN,
  RESUME_GRACE_SECONDS_MAX,
  runCoordinatorCommand,
  WORKERS_MIN_MAX,
  WORKERS_WAIT_SECONDS_MAX,
  type CoordinatorCommandOptions,
} from './commands/coordinator-command.js';
import { integerInRange, numberInRange, secondsInRange } from './commands/number-options.js';
import { REPEATS_LIMITS } from './scenario/repeats-schema.js';
import {
  REPEAT_FIGURES,
  figureOptionName,
  parseRankBy,
  type RepeatFigure,
} from './report/repeat-figures.js';
import { formatRepeatedComparison } from './report/repeat-table.js';
import { writeRunReport } from './commands/report-command.js';
import { useTheoryStore } from './theory/plan-theory.js';
import { diskTheoryStore, theoryCacheDir } from '../runtime/theory-cache.js';
import {
  defaultCompareDir,
  planComparison,
  runComparison,
  type CompareOptions,
} from './commands/compare-command.js';
import { comparisonJson, formatComparison } from './report/compare-table.js';
import { ladderOptionHelp } from './report/ladder-option.js';
import { tuningOptionHelp } from './report/tuning-option.js';
import {
  METRICS_LINGER_SECONDS_MAX,
  parseMetricsAddress,
  type MetricsAddress,
} from '../runtime/metrics-server.js';
import { JoinError } from '../client/connection.js';
import { parseViewAddress } from '../server/live-view/view-address.js';
import type { HostPort } from '../runtime/address.js';

/** An input problem found by a command itself (not by the scenario schema). */
export class UsageError extends Error {
  readonly code = 'E_USAGE';
}

function collect(value: string, previous: string[]): string[] {
  return [...previous, value];
}

const tweakOption = new Option(
  '--tweak <field:value>',
  'change one scenario field; the first colon ends the field and the value is read as YAML, e.g. --tweak method.localSteps:10 (repeatable, applied in order)',
)
  .argParser(collect)
  .default([] as string[]);

function asArgument<T>(parse: (text: string) => T): (text: string) => T {
  return (text) => {
    try {
      return parse(text);
    } catch (error) {
      throw new InvalidArgumentError((error as Error).message);
    }
  };
}

const metricsOption = new Option(
  '--metrics <host:port>',
  'serve Prometheus metrics at http://HOST:PORT/metrics (a bare PORT: on 127.0.0.1; port 0: any free port)',
).argParser(asArgument(parseMetricsAddress));
const metricsLingerOption = new Option(
  '--metrics-linger <seconds>',
  'after the run, keep serving the final metrics this long so that a scraper reads them',
)
  .argParser(secondsInRange('--metrics-linger', 0, METRICS_LINGER_SECONDS_MAX))
  .default(0);

const viewOption = new Option(
  '--view <host:port>',
  'serve a live view of the run at http://HOST:PORT/ (a bare PORT: on 127.0.0.1; port 0: any free port); beyond loopback only through the link printed, which carries a token derived from the key',
).argParser(asArgument(parseViewAddress));

interface MetricsOptions {
  metrics?: MetricsAddress;
  metricsLinger: number;
}

function metricsServing(
  opts: MetricsOptions,
): { address: MetricsAddress; lingerSeconds: number } | null {
  return opts.metrics === undefined
    ? null
    : { address: opts.metrics, lingerSeconds: opts.metricsLinger };
}

interface Io {
  out: (text: string) => void;
  err: (text: string) => void;
}

/** The end of a distributed run, as `run` and `coordinator` both show it: the report, then the table or outcome.json. */
async function finishDistributed(
  io: Io,
  progress: ProgressLine,
  result: DistributedRunResult,
  outDir: string,
  json: boolean,
): Promise<void> {
  progress.finish();
  await writeRunReport(outDir);
  io.out(
    json
      ? `${JSON.stringify(result.summary, null, 2)}\n`
      : formatDistributedSummary(result, outDir),
  );
}

function buildProgram(io: Io): Command {
  const program = new Command('roundwire')
    .description(
      'A testbed for federated optimization: real rounds over WebSockets, injected stragglers, counted bytes, theory beside measurement.',
    )
    .version('0.1.0')
    .configureOutput({ writeOut: io.out, writeErr: io.err })
    .addHelpText('after', exitCodesHelp)
    .exitOverride()
    .showHelpAfterError('(add --help for usage)');

  program
    .command('theory')
    .description(
      "solve the scenario's problem with the oracle and print x*'s certificate and the constants (L, mu, heterogeneity)",
    )
    .argument('<scenario>', 'scenario file (YAML or JSON)')
    .addOption(tweakOption)
    .option('--json', 'print JSON instead of a table')
    .addHelpText('after', exitCodesHelp)
    .action(async (file: string, opts: { tweak: string[]; json?: boolean }) => {
      const report = await theoryReport(loadScenarioFile(file, opts.tweak));
      io.out(opts.json ? `${JSON.stringify(report, null, 2)}\n` : formatTheoryReport(report));
    });

  program
    .command('shards')
    .description("write every client's shard as CSV (features, then target), one file per client")
    .argument('<scenario>', 'scenario file (YAML or JSON)')
    .requiredOption('--out <dir>', 'folder to write client-NNN.csv files into')
    .addOption(tweakOption)
    .option('--json', 'print the written files as JSON')
    .addHelpText('after', exitCodesHelp)
    .action((file: string, opts: { tweak: string[]; out: string; json?: boolean }) => {
      const files = writeShards(loadScenarioFile(file, opts.tweak), opts.out);
      io.out(
        opts.json
          ? `${JSON.stringify({ dir: opts.out, files }, null, 2)}\n`
          : `wrote ${files.length} shards to ${opts.out}\n`,
      );
    });

  program
    .command('run')
    .description(
      'run a scenario: real rounds between a coordinator and worker processes, or --in-process with no network',
    )
    .argument('<scenario>', 'scenario file (YAML or JSON)')
    .addOption(tweakOption)
    .option('--in-process', 'run every client in this process with the virtual clock (no sockets)')
    .option('--out <dir>', 'results folder (default results/<name>-<method>-<time>)')
    .option(
      '--json',
      'print outcome.json (see the results folder in README.md) instead of the table',
    )
    .addOption(metricsOption)
    .addOption(metricsLingerOption)
    .addOption(viewOption)
    .addHelpText('after', exitCodesHelp)
    .action(
      async (
        file: string,
        opts: {
          tweak: string[];
          inProcess?: boolean;
          out?: string;
          json?: boolean;
          view?: HostPort;
        } & MetricsOptions,
      ) => {
        if (opts.inProcess && opts.metrics !== undefined)
          throw new UsageError(
            '--metrics serves the coordinator of a distributed run; --in-process has none',
          );
        if (opts.inProcess && opts.view !== undefined)
          throw new UsageError(
            '--view shows the coordinator of a distributed run; --in-process has none',
          );
        const scenario = loadScenarioFile(file, opts.tweak);
        const outDir = opts.out ?? defaultResultsDir(scenario, new Date());
        prepareResultsFolder(outDir);
        const progress = new ProgressLine(
          { write: io.err, isTTY: process.stderr.isTTY === true },
          scenario.run.rounds,
          gapIsToReference(scenario.problem.kind),
        );
        if (!opts.inProcess) {
          const result = await runDistributed(
            scenario,
            outDir,
            { out: io.out, err: io.err, onRound: (r) => progress.update(r) },
            metricsServing(opts),
            null,
            opts.view ?? null,
          );
          await finishDistributed(io, progress, result, outDir, opts.json === true);
          return;
        }
        const { summary } = await runInProcessCheckpointed(scenario, outDir, {
          err: io.err,
          onRound: (r) => progress.update(r),
        });
        progress.finish();
        await writeRunReport(outDir);
        io.out(
          opts.json ? `${JSON.stringify(summary, null, 2)}\n` : formatRunSummary(summary, outDir),
        );
      },
    );

  program
    .command('worker')
    .description('join a coordinator and host the clients it deals to this process')
    .argument(
      '<coordinator-url>',
      'the coordinator, ws://HOST:PORT or wss://HOST:PORT; - reads it as one line from standard input (the way `run` starts its local workers before its coordinator listens)',
    )
    .option(
      '--key-file <path>',
      'file holding the shared key, private to you (chmod 600), at least 16 bytes (default: the file ROUNDWIRE_KEY_FILE names)',
    )
    .addOption(
      new Option(
        '--capacity <n>',
        `how many clients this worker offers to host (1 to ${WORKER_CAPACITY_MAX})`,
      )
        .argParser(integerInRange('--capacity', 1, WORKER_CAPACITY_MAX))
        .default(1),
    )
    .option('--name <name>', 'worker name for logs and metrics (default host-pid)')
    .option(
      '--ca <file>',
      "PEM certificate(s) to trust for a wss:// coordinator beside the system's, e.g. its self-signed --tls-cert",
    )
    .addOption(
      new Option(
        '--coordinator-wait-seconds <s>',
        `until the coordinator first answers, keep trying to reach it (backoff from 0.25 s, doubling, at most 5 s apart) this long in all, e.g. while a cluster starts it (0 to ${COORDINATOR_WAIT_SECONDS_MAX} s; default 300)`,
      ).argParser(secondsInRange('--coordinator-wait-seconds', 0, COORDINATOR_WAIT_SECONDS_MAX)),
    )
    .addOption(
      new Option(
        '--reconnect-wait-seconds <s>',
        `when the coordinator drops mid-run, keep trying to reach it (backoff from 0.25 s, doubling, at most 5 s apart) this long in all, e.g. while it is resumed (0 to ${RECONNECT_WAIT_SECONDS_MAX} s; default 120)`,
      ).argParser(secondsInRange('--reconnect-wait-seconds', 0, RECONNECT_WAIT_SECONDS_MAX)),
    )
    .addOption(metricsOption)
    .addOption(metricsLingerOption)
    .addHelpText('after', exitCodesHelp)
    .action(async (urlArgument: string, opts: WorkerCommandOptions) => {
      let url = urlArgument;
      if (url === URL_FROM_STDIN) {
        try {
          url = await readUrlLine(process.stdin);
        } catch (error) {
          throw new UsageError((error as Error).message);
        } finally {
          // Nothing more is read: a handle left open would keep the process from exiting.
          process.stdin.destroy();
        }
      }
      const problem = workerOptionsProblem(url, opts, process.env);
      if (problem !== null) throw new UsageError(problem);
      const exit = await runWorkerCommand(url, opts, process.env, io.err);
      io.err(`worker: done (${exit.reason}), hosted clients ${exit.clientIds.join(', ')}\n`);
    });

  program
    .command('coordinator')
    .description('wait for workers from other machines, then run the scenario with them')
    .argument('<scenario>', 'scenario file (YAML or JSON)')
    .requiredOption(
      '--listen <host:port>',
      'address to listen on, e.g. 0.0.0.0:7070 (port 0: any free port)',
    )
    .option(
      '--key-file <path>',
      'file holding the shared key workers prove, private to you (chmod 600); required beyond loopback (default: the file ROUNDWIRE_KEY_FILE names; on loopback without either, a fresh one, whose path is printed)',
    )
    .option('--tls-cert <file>', 'PEM certificate: serve wss:// instead of ws://')
    .option('--tls-key <file>', 'PEM private key for --tls-cert')
    .addOption(
      new Option(
        '--workers-wait-seconds <s>',
        'give up if the workers have not joined within this many seconds',
      )
        .argParser(secondsInRange('--workers-wait-seconds', 0, WORKERS_WAIT_SECONDS_MAX, true))
        .default(300),
    )
    .addOption(
      new Option('--workers-min <n>', 'wait for at least this many workers')
        .argParser(integerInRange('--workers-min', 1, WORKERS_MIN_MAX))
        .default(1),
    )
    .addOption(
      new Option(
        '--heartbeat-silence-seconds <s>',
        'a worker silent this long (1 to 3600 s) is lost and its clients leave the run; heartbeats go every sixth of it (default 30)',
      ).argParser(
        secondsInRange(
          '--heartbeat-silence-seconds',
          HEARTBEAT_SILENCE_SECONDS_MIN,
          HEARTBEAT_SILENCE_SECONDS_MAX,
        ),
      ),
    )
    .addOption(
      new Option(
        '--resume-grace-seconds <s>',
        'a worker whose connection drops mid-run may reconnect and resume this long (0 to 3600 s; 0: lost at once); its clients sit out meanwhile (default 5)',
      ).argParser(secondsInRange('--resume-grace-seconds', 0, RESUME_GRACE_SECONDS_MAX)),
    )
    .option('--out <dir>', 'results folder (default results/<name>-<method>-<time>)')
    .option(
      '--json',
      'print outcome.json (see the results folder in README.md) instead of the table',
    )
    .addOption(tweakOption)
    .addOption(metricsOption)
    .addOption(metricsLingerOption)
    .addOption(viewOption)
    .addHelpText('after', exitCodesHelp)
    .action(
      async (
        file: string,
        opts: CoordinatorCommandOptions &
          MetricsOptions & { tweak: string[]; out?: string; json?: boolean },
      ) => {
        const problem = coordinatorOptionsProblem(opts, process.env);
        if (problem !== null) throw new UsageError(problem);
        const scenario = loadScenarioFile(file, opts.tweak);
        const outDir = opts.out ?? defaultResultsDir(scenario, new Date());
        prepareResultsFolder(outDir);
        const progress = new ProgressLine(
          { write: io.err, isTTY: process.stderr.isTTY === true },
          scenario.run.rounds,
          gapIsToReference(scenario.problem.kind),
        );
        const result = await runCoordinatorCommand(
          scenario,
          opts,
          outDir,
          process.env,
          { err: io.err, onRound: (r) => progress.update(r) },
          metricsServing(opts),
        );
        await finishDistributed(io, progress, result, outDir, opts.json === true);
      },
    );

  program
    .command('resume')
    .description(
      'go on with an interrupted run from the checkpoint in its results folder: with local workers as run does, --in-process, or as a coordinator (--listen) that workers rejoin',
    )
    .argument('<results-folder>', 'a folder written by run or coordinator, holding checkpoint.bin')
    .option('--in-process', 'go on in this process with the virtual clock (no sockets)')
    .option(
      '--listen <host:port>',
      'go on as a coordinator listening here, as `coordinator` does; its workers rejoin by themselves',
    )
    .option(
      '--key-file <path>',
      'with --listen: the shared key file, as for coordinator (default: ROUNDWIRE_KEY_FILE; on loopback without either, a fresh one)',
    )
    .addOption(
      new Option('--workers-min <n>', 'with --listen: wait for at least this many workers')
        .argParser(integerInRange('--workers-min', 1, WORKERS_MIN_MAX))
        .default(1),
    )
    .addOption(
      new Option(
        '--workers-wait-seconds <s>',
        'with --listen: give up if the workers have not joined within this many seconds',
      )
        .argParser(secondsInRange('--workers-wait-seconds', 0, WORKERS_WAIT_SECONDS_MAX, true))
        .default(300),
    )
    .option(
      '--json',
      'print outcome.json (see the results folder in README.md) instead of the table',
    )
    .addHelpText('after', exitCodesHelp)
    .action(
      async (
        dir: string,
        opts: {
          inProcess?: boolean;
          listen?: string;
          keyFile?: string;
          workersMin: number;
          workersWaitSeconds: number;
          json?: boolean;
        },
      ) => {
        if (opts.inProcess && opts.listen !== undefined)
          throw new UsageError('--in-process and --listen exclude each other');
        const { scenario, checkpoint } = loadRunToResume(dir);
        const progress = new ProgressLine(
          { write: io.err, isTTY: process.stderr.isTTY === true },
          scenario.run.rounds,
          gapIsToReference(scenario.problem.kind),
        );
        io.err(`resuming ${dir} after round ${checkpoint.state.round}\n`);
        const onRound = (r: RoundRecord) => progress.update(r);
        if (opts.inProcess) {
          const { summary } = await runInProcessCheckpointed(
            scenario,
            dir,
            { err: io.err, onRound },
            checkpoint,
          );
          progress.finish();
          await writeRunReport(dir);
          io.out(
            opts.json ? `${JSON.stringify(summary, null, 2)}\n` : formatRunSummary(summary, dir),
          );
          return;
        }
        if (opts.listen === undefined) {
          const result = await runDistributed(
            scenario,
            dir,
            { out: io.out, err: io.err, onRound },
            null,
            checkpoint,
          );
          await finishDistributed(io, progress, result, dir, opts.json === true);
          return;
        }
        const coordinatorOpts: CoordinatorCommandOptions = {
          listen: opts.listen,
          workersMin: opts.workersMin,
          workersWaitSeconds: opts.workersWaitSeconds,
          ...(opts.keyFile === undefined ? {} : { keyFile: opts.keyFile }),
        };
        const problem = coordinatorOptionsProblem(coordinatorOpts, process.env);
        if (problem !== null) throw new UsageError(problem);
        const result = await runCoordinatorCommand(
          scenario,
          coordinatorOpts,
          dir,
          process.env,
          { err: io.err, onRound },
          null,
          checkpoint,
        );
        await finishDistributed(io, progress, result, dir, opts.json === true);
      },
    );

  program
    .command('report')
    .description(
      'write report.html for a results folder: curves against rounds, bytes and seconds beside the prediction, traffic, timeline, summary',
    )
    .argument('<results-folder>', 'a folder written by run, coordinator or compare')
    .option('--out <file>', 'write the page here (default <results-folder>/report.html)')
    .option('--json', 'print {"report": path} as JSON')
    .addHelpText('after', exitCodesHelp)
    .action(async (dir: string, opts: { out?: string; json?: boolean }) => {
      const file = await writeRunReport(dir, opts.out);
      io.out(opts.json ? `${JSON.stringify({ report: file })}\n` : `wrote ${file}\n`);
    });

  program
    .command('compare')
    .description(
      "run one variant for every combination of rungs of the ladders (--ladder, or the scenario's ladders section) with the same seed, speeds and links; compare rounds, bytes and time to target",
    )
    .argument('<scenario>', 'scenario file (YAML or JSON)')
    .addOption(
      new Option(
        '--ladder <field:rung/rung>',
        'move a field through rungs, e.g. method.name:fedavg/fedlin; several fields together: a+b:1,2/3,4 (repeatable: the product runs; see Ladders below)',
      )
        .argParser(collect)
        .default([] as string[]),
    )
    .addOption(tweakOption)
    .option(
      '--distributed',
      'run each variant with local worker processes over WebSockets instead of in process',
    )
    .option(
      '--out <dir>',
      'folder for compare.html, compare.csv, compare.json and one results folder per variant (default results/compare-<name>-<time>)',
    )
    .addOption(
      new Option(
        '--repeats <n>',
        'run every variant n times on n seeds for speeds, participation, minibatches and compression, the data fixed; report mean, sd and a confidence interval of every figure, and a paired verdict',
      ).argParser(integerInRange('--repeats', 1, REPEATS_LIMITS.countMax)),
    )
    .option(
      '--redraw-data',
      "with --repeats: draw the data again from each repeat's seed too (by default it stays fixed)",
    )
    .addOption(
      new Option(
        '--confidence <level>',
        'two-sided confidence of the intervals and the verdict with --repeats (default 0.95)',
      ).argParser(
        numberInRange('--confidence', REPEATS_LIMITS.confidenceMin, REPEATS_LIMITS.confidenceMax),
      ),
    )
    .addOption(
      new Option(
        '--rank-by <figure>',
        `with --repeats, the figure the verdict ranks by (repeatable): ${REPEAT_FIGURES.map(figureOptionName).join(', ')} (default: bytes, uplink bytes and seconds to target)`,
      ).argParser((text: string, previous: RepeatFigure[] | undefined) => [
        ...(previous ?? []),
        parseRankBy(text),
      ]),
    )
    .option('--json', 'print compare.json instead of the table')
    .option(
      '--tune <field:low..high>',
      'tune this field per variant before it runs (or field:v1/v2/...; see Tuning below)',
    )
    .option(
      '--tune-search <grid:N|golden>',
      'search a range by a log grid (N a decade) or golden section',
    )
    .option('--tune-budget <runs>', 'candidate runs a variant may make (default 16)')
    .option('--tune-by <figure>', 'the figure that ranks candidates (default rounds-to-target)')
    .addHelpText('after', tuningOptionHelp)
    .addHelpText('after', ladderOptionHelp)
    .addHelpText('after', exitCodesHelp)
    .action(async (file: string, opts: CompareOptions & { json?: boolean }) => {
      const plan = planComparison(file, opts);
      const outDir = opts.out ?? defaultCompareDir(plan.base, new Date());
      prepareResultsFolder(outDir);
      const comparison = await runComparison(plan, outDir, opts, { err: io.err });
      io.out(
        opts.json
          ? comparisonJson(comparison)
          : comparison.repeats === undefined
            ? formatComparison(comparison, outDir)
            : formatRepeatedComparison(comparison, comparison.repeats, outDir),
      );
    });

  program
    .command('schema')
    .description('print the scenario JSON Schema (for editors), or write it with --out')
    .option('--out <file>', 'write to this file instead of standard output')
    .addHelpText('after', exitCodesHelp)
    .action((opts: { out?: string }) => {
      const text = `${JSON.stringify(scenarioJsonSchema(), null, 2)}\n`;
      if (opts.out) writeFileSync(opts.out, text);
      else io.out(text);
    });

  return program;
}

function isBadInput(error: unknown): error is Error {
  return error instanceof Error && exitCodeOf(error) === exitCodes.badInput;
}

/** Runs the command line; resolves to the process exit code. */
export async function main(
  argv: string[],
  io: Io = { out: (t) => process.stdout.write(t), err: (t) => process.stderr.write(t) },
): Promise<number> {
  const program = buildProgram(io);
  useTheoryStore(
    diskTheoryStore(theoryCacheDir(), (message) => io.err(`roundwire: warning: ${message}\n`)),
  );
  try {
    await program.parseAsync(argv);
    return exitCodes.ok;
  } catch (error) {
    if (error instanceof CommanderError) {
      if (
        error.code === 'commander.helpDisplayed' ||
        error.code === 'commander.help' ||
        error.code === 'commander.version'
      )
        return exitCodes.ok;
      return exitCodes.badInput;
    }
    if (error instanceof JoinError) {
      // The message says what to change (URL scheme, --ca, key file); a stack would bury it.
      io.err(`roundwire: ${error.message}\n`);
      return exitCodes.failure;
    }
    if (error instanceof RunInterrupted) {
      io.err(`roundwire: ${error.message}\n`);
      return exitCodes.interrupted;
    }
    if (isBadInput(error)) {
      io.err(`roundwire: ${error.message}\n`);
      return exitCodes.badInput;
    }
    io.err(
      `roundwire: ${error instanceof Error ? (error.stack ?? error.message) : String(error)}\n`,
    );
    return exitCodes.failure;
  }
}
