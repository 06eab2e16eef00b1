// Every limit a scenario can pass, as a user meets it through the built command line: exit code 2
// and one line naming the field, the value and the limit (or the memory or records it implies),
// before any data is built, a worker is started or a port is opened.
import { describe, expect, it } from 'vitest';
import { runCli, type CliResult } from './run-cli.js';

/** Exit code 2 and exactly one line on stderr, matching `pattern`. */
function expectOneLineBadInput(r: CliResult, pattern: RegExp): void {
  expect(r.code, r.stderr).toBe(2);
  const lines = r.stderr.trimEnd().split('\n');
  expect(lines, r.stderr).toHaveLength(1);
  expect(lines[0]).toMatch(pattern);
}

const tweaks = (...values: string[]) => values.flatMap((v) => ['--tweak', v]);
/** Node's start and the scenario's load take the time; nothing large is allocated. */
const CLI_MS = 20_000;

describe('limits refused at load, through the command line', () => {
  it.each([
    [
      'data.features:100001',
      /^roundwire: data\.features: expected a positive integer <= 100000, got 100001/,
    ],
    [
      'clients.count:10001',
      /^roundwire: clients\.count: expected a positive integer <= 10000, got 10001/,
    ],
    [
      'method.localSteps:100001',
      /^roundwire: method\.localSteps: 100001 local steps is above the limit of 100000/,
    ],
    [
      'data.samplesPerClient:1000001',
      /^roundwire: data\.samplesPerClient: 1000001 samples is above the limit of 1000000/,
    ],
    [
      'problem.classes:1001',
      /^roundwire: problem\.classes: expected an? integer >= 2 and <= 1000, got 1001/,
    ],
  ])(
    'a field past its limit: %s',
    async (tweak, pattern) => {
      expectOneLineBadInput(
        await runCli(
          ['run', 'scenarios/quickstart.yaml', '--in-process', ...tweaks(tweak)],
          CLI_MS,
        ),
        pattern,
      );
    },
    CLI_MS + 5_000,
  );

  it(
    "softmax's dimension, classes x features",
    async () => {
      expectOneLineBadInput(
        await runCli(
          [
            'theory',
            'scenarios/quickstart.yaml',
            ...tweaks('problem.kind:softmax', 'problem.classes:200', 'data.features:1000'),
          ],
          CLI_MS,
        ),
        /^roundwire: problem\.classes: 200 classes x 1000 features is a model of dimension 200000, above the limit of 100000 \(from --tweak "problem\.classes:200"\)$/,
      );
    },
    CLI_MS + 5_000,
  );

  it(
    'rounds x clients of the records',
    async () => {
      expectOneLineBadInput(
        await runCli(
          [
            'run',
            'scenarios/quickstart.yaml',
            ...tweaks('clients.count:10000', 'run.rounds:1000000', 'method.name:fedavg'),
          ],
          CLI_MS,
        ),
        /^roundwire: run\.rounds: 1000000 rounds x 10000 clients a round x 1 exchange would write 10000000000 client records .* above the limit of 100000000; use fewer rounds or clients$/,
      );
    },
    CLI_MS + 5_000,
  );

  it(
    'd = 100,000 with 8 clients of 500 samples: the shards alone pass the memory limit',
    async () => {
      expectOneLineBadInput(
        await runCli(
          [
            'run',
            'scenarios/wide-least-squares.yaml',
            '--in-process',
            ...tweaks('data.features:100000'),
          ],
          CLI_MS,
        ),
        /^roundwire: the run would need an estimated \d+\.\d MiB of memory \(data 3051\.8, kernel copy 3051\.8, .* model dimension 100000\), above the limit of 4096 MiB$/,
      );
    },
    CLI_MS + 5_000,
  );

  it(
    'd = 20,000 with 1,000 samples a client: fits one process, not the coordinator with two local workers',
    async () => {
      const doubled = tweaks('data.samplesPerClient:1000');
      expectOneLineBadInput(
        await runCli(['run', 'scenarios/wide-least-squares.yaml', ...doubled], CLI_MS),
        /^roundwire: the run would need an estimated \d+\.\d MiB of memory \(coordinator \d+\.\d MiB .* and 2 local workers of up to \d+\.\d MiB each for clients\.count 8, model dimension 20000\), above the limit of 4096 MiB$/,
      );
      expectOneLineBadInput(
        await runCli(
          [
            'coordinator',
            'scenarios/wide-least-squares.yaml',
            '--listen',
            '127.0.0.1:0',
            ...doubled,
          ],
          CLI_MS,
        ),
        /^roundwire: the run would need an estimated \d+\.\d MiB of memory \(.*; its evaluation thread's copy of the shards included for clients\.count 8, model dimension 20000\), above the limit of 4096 MiB$/,
      );
    },
    2 * CLI_MS + 5_000,
  );
});
