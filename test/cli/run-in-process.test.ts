// `roundwire run --in-process` as a user runs it: the results folder (README.md, "Results
// folder") and outcome.json.
import { describe, expect, it } from 'vitest';
import { mkdtempSync, readdirSync, readFileSync, rmSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { parse } from 'yaml';
import { runCli } from './run-cli.js';

describe('roundwire run --in-process', () => {
  it('writes the results folder and prints outcome.json with the documented fields', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'roundwire-run-'));
    try {
      const r = await runCli([
        'run',
        'scenarios/quickstart.yaml',
        '--in-process',
        '--json',
        '--out',
        dir,
      ]);
      expect(r.code).toBe(0);
      const outcome = JSON.parse(r.stdout);
      // Every file README.md's "Results folder" lists, and no other.
      expect(readdirSync(dir).sort()).toEqual([
        'clients.jsonl',
        'model.f64',
        'model.json',
        'outcome.json',
        'report.html',
        'resolved-scenario.yaml',
        'rounds.jsonl',
      ]);
      expect(outcome).toEqual(JSON.parse(readFileSync(join(dir, 'outcome.json'), 'utf8')));
      expect(outcome.method).toBe('fedlin');
      expect(outcome.stopReason).toBe('target-reached');
      expect(outcome.suboptimality.final).toBeLessThanOrEqual(outcome.target);
      expect(outcome.roundsToTarget).toBe(outcome.rounds);
      for (const key of ['measured', 'predicted']) {
        expect(typeof outcome.rate[key]).toBe('number');
        expect(outcome.floor).toHaveProperty(key);
      }
      expect(outcome.bytes.payload.up).toBeGreaterThan(0);
      expect(outcome.bytes.payload.down).toBeGreaterThan(0);
      expect(outcome.seconds.virtual).toBeGreaterThan(0);
      expect(outcome.seconds.wall).toBeGreaterThan(0);

      const rounds = readFileSync(join(dir, 'rounds.jsonl'), 'utf8')
        .trim()
        .split('\n')
        .map((l) => JSON.parse(l));
      expect(rounds).toHaveLength(outcome.rounds + 1);
      expect(rounds.map((x) => x.round)).toEqual(
        Array.from({ length: outcome.rounds + 1 }, (_, i) => i),
      );
      for (const line of rounds.slice(1)) {
        for (const key of ['suboptimality', 'distance', 'bytes', 'localSteps', 'virtualSeconds'])
          expect(line).toHaveProperty(key);
        expect(Object.values(line.localSteps)).toEqual(Array(8).fill(5));
      }
      // the payload of a dense f64 round: 8 clients x (gradient + delta up, model + gradient down) x 20 x 8 bytes
      expect(rounds[1].bytes.payload).toEqual({ up: 8 * 2 * 20 * 8, down: 8 * 2 * 20 * 8 });
      const resolved = parse(readFileSync(join(dir, 'resolved-scenario.yaml'), 'utf8'));
      expect(resolved.timing.policy).toEqual({ kind: 'all' });
      expect(statSync(join(dir, 'model.f64')).size).toBe(20 * 8);
      const clients = readFileSync(join(dir, 'clients.jsonl'), 'utf8').trim().split('\n');
      expect(clients).toHaveLength(outcome.rounds * 8 * 2);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });

  it('names the reason when no prediction is made, and says when one is local', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'roundwire-run-'));
    try {
      const run = (out: string, tweaks: string[]) =>
        runCli([
          'run',
          'scenarios/quickstart.yaml',
          '--in-process',
          '--json',
          '--out',
          join(dir, out),
          '--tweak',
          'problem.kind:logistic',
          '--tweak',
          'run.rounds:20',
          ...tweaks.flatMap((t) => ['--tweak', t]),
        ]);
      const refused = await run('partial', ['method.participation:0.5']);
      expect(refused.code).toBe(0);
      const none = JSON.parse(refused.stdout);
      expect(none.prediction.available).toBe(false);
      expect(none.prediction.kind).toBeNull();
      expect(none.prediction.reason).toBe('partial participation makes the round map random');
      expect(none.rate.predicted).toBeNull();
      // A logistic FedLin run with nothing random in its rounds: the round map linearized at
      // its limit, a rate in (0, 1) (the run converges) that is marked local.
      const linearized = await run('full', []);
      expect(linearized.code).toBe(0);
      const local = JSON.parse(linearized.stdout);
      expect(local.prediction.available).toBe(true);
      expect(local.prediction.kind).toBe('local');
      expect(local.rate.predicted).toBeGreaterThan(0);
      expect(local.rate.predicted).toBeLessThan(1);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
