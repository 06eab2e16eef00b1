// TLS: `roundwire coordinator --tls-cert F --tls-key F` serves wss://, and a worker that trusts
// the certificate (--ca F) joins and completes a run. The mismatches end at once with a message
// that says what to change, instead of eight retries: a plain ws:// worker against the TLS
// coordinator, a wss:// worker that does not trust the self-signed certificate, and a wss://
// worker against a plain server.
// The certificate is made for the test by the openssl command (a self-signed X.509 certificate
// for 127.0.0.1, RFC 5280; its subjectAltName IP entry is what Node checks the host against,
// RFC 6125 section 6).

import { execFileSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { createServer } from 'node:http';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { connectWithRetry, JoinError } from '../../client/connection.js';
import { CliProcess, freshDir, repoRoot, writeKeyFile } from './cli-process.js';

const KEY = 'a-key-for-the-tls-test';

function hasOpenssl(): boolean {
  try {
    execFileSync('openssl', ['version'], { stdio: 'ignore' });
    return true;
  } catch {
    return false;
  }
}

/** A self-signed P-256 certificate for 127.0.0.1, valid for a day; returns the two PEM files. */
function makeCertificate(dir: string): { certFile: string; keyFile: string } {
  const certFile = join(dir, 'cert.pem');
  const keyFile = join(dir, 'key.pem');
  execFileSync(
    'openssl',
    [
      'req',
      '-x509',
      '-newkey',
      'ec',
      '-pkeyopt',
      'ec_paramgen_curve:prime256v1',
      '-nodes',
      '-keyout',
      keyFile,
      '-out',
      certFile,
      '-days',
      '1',
      '-subj',
      '/CN=roundwire test coordinator',
      '-addext',
      'subjectAltName=IP:127.0.0.1',
    ],
    { stdio: 'ignore', timeout: 20_000 },
  );
  return { certFile, keyFile };
}

describe('a coordinator serving wss://', () => {
  let coordinator: CliProcess;
  let certFile = '';
  let keyFile = '';
  let url = '';
  let out = '';
  const started: CliProcess[] = [];

  beforeAll(async () => {
    // The certificate cannot be made without openssl: node:crypto signs, but builds no X.509.
    expect(hasOpenssl(), 'the openssl command is needed to make the test certificate').toBe(true);
    const dir = freshDir('tls');
    const files = makeCertificate(dir);
    certFile = files.certFile;
    keyFile = writeKeyFile(dir, KEY);
    out = join(dir, 'results');
    coordinator = new CliProcess([
      'coordinator',
      join(repoRoot, 'scenarios/quickstart.yaml'),
      '--listen',
      '127.0.0.1:0',
      '--key-file',
      keyFile,
      '--tls-cert',
      files.certFile,
      '--tls-key',
      files.keyFile,
      '--workers-wait-seconds',
      '40',
      '--out',
      out,
      '--tweak',
      'run.rounds:5',
      '--tweak',
      'run.target:0',
    ]);
    started.push(coordinator);
    url = (await coordinator.waitForStderr(/listening on (\S+)/, 30_000))[1];
  }, 40_000);

  afterAll(() => {
    for (const p of started) p.kill();
  });

  function worker(coordinatorUrl: string, extra: string[]): CliProcess {
    const p = new CliProcess([
      'worker',
      coordinatorUrl,
      '--key-file',
      keyFile,
      '--capacity',
      '8',
      ...extra,
    ]);
    started.push(p);
    return p;
  }

  it('listens on a wss:// URL', () => {
    expect(url).toMatch(/^wss:\/\/127\.0\.0\.1:\d+$/);
  });

  it('a plain ws:// worker fails at once and is told to use wss://', async () => {
    const plain = worker(url.replace(/^wss:/, 'ws:'), ['--name', 'plain']);
    // Far below the eight retries' backoff (0 + 0.25 + 0.5 + 1 + 2 + 4 + 5 + 5 s, connection.ts).
    const exit = await plain.exit(10_000);
    expect(exit.code).toBe(1);
    expect(plain.stderr).toContain(`serves TLS: join with ${url} instead of ws://`);
    expect(plain.stderr).not.toMatch(/attempt \d+\/\d+/);
    expect(plain.stderr).not.toMatch(/^\s+at /m);
  }, 15_000);

  it('a wss:// worker that does not trust the certificate fails at once and is pointed to --ca', async () => {
    const untrusting = worker(url, ['--name', 'untrusting']);
    const exit = await untrusting.exit(10_000);
    expect(exit.code).toBe(1);
    // OpenSSL's verify code for a self-signed leaf (openssl-verify(1), X509_V_ERR_DEPTH_ZERO_SELF_SIGNED_CERT).
    expect(untrusting.stderr).toMatch(/certificate was refused \(DEPTH_ZERO_SELF_SIGNED_CERT/);
    expect(untrusting.stderr).toContain('--ca FILE');
  }, 15_000);

  it('a worker given --ca joins over wss:// and the run completes', async () => {
    const trusting = worker(url, ['--name', 'trusting', '--ca', certFile]);
    const workerExit = await trusting.exit(40_000);
    expect(workerExit.code, trusting.stderr).toBe(0);
    expect(trusting.stderr).toMatch(
      /done \(rounds-complete\), hosted clients 0, 1, 2, 3, 4, 5, 6, 7/,
    );
    const exit = await coordinator.exit(20_000);
    expect(exit.code, coordinator.stderr).toBe(0);
    const summary = JSON.parse(readFileSync(join(out, 'outcome.json'), 'utf8')) as {
      stopReason: string;
      distributed: { workers: { workerName: string }[]; lostWorkers: unknown[] };
    };
    expect(summary.stopReason).toBe('rounds-complete');
    expect(summary.distributed.workers.map((w) => w.workerName)).toEqual(['trusting']);
    expect(summary.distributed.lostWorkers).toEqual([]);
    // The refused attempts never reached the handshake: no protocol error was counted for them.
    expect(coordinator.stderr).not.toMatch(/refused \(E_/);
  }, 60_000);
});

describe('roundwire worker --ca', () => {
  it('exits 2 when the file holds no certificate', async () => {
    const dir = freshDir('tls-bad-ca');
    const p = new CliProcess([
      'worker',
      'wss://127.0.0.1:9',
      '--key-file',
      writeKeyFile(dir, KEY),
      '--ca',
      join(dir, 'missing.pem'),
    ]);
    try {
      const exit = await p.exit(15_000);
      expect(exit.code).toBe(2);
      expect(p.stderr).toMatch(/--ca: cannot read .*missing\.pem/);
    } finally {
      p.kill();
    }
  }, 20_000);
});

describe('a wss:// worker against a plain ws:// server', () => {
  it('fails at once and is told to use ws://', async () => {
    const server = createServer();
    await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', () => resolve()));
    const port = (server.address() as { port: number }).port;
    const retries: string[] = [];
    try {
      const policy = {
        attemptsMax: 3,
        firstDelaySeconds: 0.01,
        delayFactor: 2,
        delayCapSeconds: 0.02,
        waitTotalSeconds: 10,
        connectTimeoutSeconds: 5,
      };
      const error = await connectWithRetry(
        `wss://127.0.0.1:${port}`,
        policy,
        1024,
        () => undefined,
        (line) => retries.push(line),
      ).catch((e: unknown) => e);
      expect(error).toBeInstanceOf(JoinError);
      expect((error as JoinError).message).toContain(
        `127.0.0.1:${port} does not speak TLS: join with ws://127.0.0.1:${port} instead of wss://`,
      );
      expect(retries).toEqual([]);
    } finally {
      server.closeAllConnections();
      await new Promise<void>((resolve) => server.close(() => resolve()));
    }
  });
});
