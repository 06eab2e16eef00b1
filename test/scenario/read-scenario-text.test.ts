// Reading a scenario stops one byte past the limit, whatever the source reports about its size.
import { afterAll, describe, expect, it } from 'vitest';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { readScenarioText } from '../../src/scenario/read-scenario-text.js';
import { ScenarioError } from '../../src/scenario/scenario-error.js';

function expectErrorCode(action: () => unknown, code: string, message: RegExp): void {
  let thrown: unknown = null;
  try {
    action();
  } catch (error) {
    thrown = error;
  }
  expect(thrown).toBeInstanceOf(ScenarioError);
  expect((thrown as ScenarioError).code).toBe(code);
  expect((thrown as ScenarioError).message).toMatch(message);
}

const root = mkdtempSync(join(tmpdir(), 'roundwire-read-'));
afterAll(() => rmSync(root, { recursive: true, force: true }));

describe('readScenarioText', () => {
  it('reads a file exactly at the limit and refuses one byte more', () => {
    const at = join(root, 'at.yaml');
    writeFileSync(at, 'x'.repeat(100));
    expect(readScenarioText(at, 100)).toBe('x'.repeat(100));
    const over = join(root, 'over.yaml');
    writeFileSync(over, 'x'.repeat(101));
    expectErrorCode(
      () => readScenarioText(over, 100),
      'E_SCENARIO_FILE',
      /over\.yaml: larger than 100 bytes/,
    );
  });

  it('stops reading a device that never ends', () => {
    expectErrorCode(
      () => readScenarioText('/dev/zero', 4096),
      'E_SCENARIO_FILE',
      /larger than 4096 bytes/,
    );
  });

  it('names the file and the system code when it cannot be opened', () => {
    expectErrorCode(
      () => readScenarioText(join(root, 'missing.yaml')),
      'E_SCENARIO_FILE',
      /missing\.yaml: cannot read the scenario \(ENOENT\)/,
    );
  });
});
