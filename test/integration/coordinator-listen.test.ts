// The coordinator refuses to listen beyond loopback without a token: anyone who can reach the
// port could join and read the plan. Bad input, so exit code 2 (src/commands/exit-codes.ts).

import { describe, expect, it } from 'vitest';
import { runCli } from '../cli/run-cli.js';

describe('roundwire coordinator --listen', () => {
  it('exits 2 with a clear message on 0.0.0.0 without a token', async () => {
    const result = await runCli(['coordinator', 'scenarios/quickstart.yaml', '--listen', '0.0.0.0:0'], 30_000, { ROUNDWIRE_TOKEN: '' });
    expect(result.code).toBe(2);
    expect(result.stderr).toMatch(/refusing to listen on 0\.0\.0\.0 without a token/);
  });
});
