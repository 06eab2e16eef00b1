// Bad repeat options and scenario sections stop compare before anything runs: exit code 2 and one
// line naming the option or the field.
import { describe, expect, it } from 'vitest';
import { runCli } from '../cli/run-cli.js';
import { planComparison } from '../../src/commands/compare-command.js';
import { numberInRange } from '../../src/commands/number-options.js';
import { measuredFigures, parseRankBy } from '../../src/report/repeat-figures.js';

describe('compare: bad repeat input', () => {
  it('--repeats 0 exits 2 naming the option (one process: the parsers below run in this one)', async () => {
    const r = await runCli(
      [
        'compare',
        'scenarios/quickstart.yaml',
        '--ladder',
        'method.localSteps:2/3',
        '--repeats',
        '0',
      ],
      30_000,
    );
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/--repeats: expected an integer from 1 to 100, got "0"/);
    expect(r.stderr.trim().split('\n')).toHaveLength(1);
  }, 40_000);

  it('--confidence and --rank-by refuse what they cannot read, with a code', () => {
    const confidence = numberInRange('--confidence', 0.5, 0.999);
    expect(confidence('0.9')).toBe(0.9);
    expect(() => confidence('1.5')).toThrow(
      expect.objectContaining({
        code: 'E_OPTION_VALUE',
        message: '--confidence: expected a number from 0.5 to 0.999, got "1.5"',
      }),
    );
    expect(() => confidence('')).toThrow(/expected a number/);
    expect(() => parseRankBy('speed')).toThrow(
      expect.objectContaining({ code: 'E_COMPARE_REPEATS' }),
    );
  });

  it('--rank-by an accuracy figure is refused where no variant names a target accuracy', () => {
    expect(() =>
      planComparison('scenarios/quickstart.yaml', {
        ladder: ['method.localSteps:2/3'],
        tweak: [],
        repeats: 2,
        rankBy: ['roundsToTargetAccuracy'],
      }),
    ).toThrow(
      expect.objectContaining({
        code: 'E_COMPARE_REPEATS',
        message: expect.stringMatching(
          /^--rank-by rounds-to-target-accuracy: every variant needs run\.targetAccuracy/,
        ),
      }),
    );
    // The figures the tables show: the accuracy ones only with a target accuracy.
    expect(measuredFigures(false)).not.toContain('bytesToTargetAccuracy');
    expect(measuredFigures(true)).toContain('bytesToTargetAccuracy');
    expect(measuredFigures(true)).toHaveLength(measuredFigures(false).length + 3);
  });

  it('a repeats section out of range names its field', () => {
    expect(() =>
      planComparison('scenarios/quickstart.yaml', {
        ladder: ['method.localSteps:2/3'],
        tweak: ['repeats:{count: 0}'],
      }),
    ).toThrow(expect.objectContaining({ code: 'E_SCENARIO_FIELD', fieldPath: 'repeats.count' }));
    expect(() =>
      planComparison('scenarios/quickstart.yaml', {
        ladder: ['method.localSteps:2/3'],
        tweak: ['repeats:{count: 3, confidence: 0.2}'],
      }),
    ).toThrow(/repeats\.confidence/);
  });
});
