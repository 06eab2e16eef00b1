// Runs the built command line as a real child process (what a user runs), with a time bound.
import { execFile } from 'node:child_process';
import { fileURLToPath } from 'node:url';

export const repoRoot = fileURLToPath(new URL('../../', import.meta.url));
const bin = fileURLToPath(new URL('../../bin/roundwire.js', import.meta.url));

export interface CliResult {
  code: number;
  stdout: string;
  stderr: string;
}

export function runCli(
  args: string[],
  timeoutMs = 60_000,
  env: NodeJS.ProcessEnv = {},
): Promise<CliResult> {
  return new Promise((resolve, reject) => {
    execFile(
      process.execPath,
      [bin, ...args],
      {
        cwd: repoRoot,
        timeout: timeoutMs,
        maxBuffer: 64 * 1024 * 1024,
        env: { ...process.env, NO_COLOR: '1', ...env },
      },
      (error, stdout, stderr) => {
        if (error && (error as NodeJS.ErrnoException & { killed?: boolean }).killed) {
          reject(new Error(`roundwire ${args.join(' ')} timed out after ${timeoutMs} ms`));
          return;
        }
        const code = error ? ((error as unknown as { code: number }).code ?? 1) : 0;
        resolve({ code: typeof code === 'number' ? code : 1, stdout, stderr });
      },
    );
  });
}
