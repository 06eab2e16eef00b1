// The oracle's answers on disk (a TheoryStore, src/theory/plan-theory.ts), so that run, compare
// and theory on one problem solve it once across processes. One file per problem hash and oracle
// version in one folder: ROUNDWIRE_CACHE_DIR when set, else roundwire/oracle under the user's
// cache folder ($XDG_CACHE_HOME, or ~/.cache). A file is a header line (format, oracle version,
// problem hash, SHA-256 of the body) and a JSON body. Writes go to a temporary file in the same
// folder and are renamed into place, so a reader sees a whole entry or none. An entry that does
// not parse, belongs to another key or fails its hash is ignored with a warning; plan-theory then
// recomputes the certificate of one that passes before it trusts it.

import { createHash, randomBytes } from 'node:crypto';
import { mkdirSync, readFileSync, renameSync, rmSync, writeFileSync } from 'node:fs';
import { homedir } from 'node:os';
import { join, resolve } from 'node:path';
import { z } from 'zod';
import type { StoredTheory, TheoryStore } from '../src/theory/plan-theory.js';

const FORMAT = 'roundwire-oracle-cache';
/** Entries larger than this are not read (x* of the largest dimension the schema allows is ~2 MB). */
const ENTRY_BYTES_MAX = 64 * 1024 * 1024;

const headerSchema = z.strictObject({
  format: z.literal(FORMAT),
  oracleVersion: z.number().int(),
  problemHash: z.string().min(1),
  bodySha256: z.string().regex(/^[0-9a-f]{64}$/),
});

const finite = z.number().finite();
// converged: absent in entries written before it was recorded, which all had converged.
const curvature = z.strictObject({
  smallest: finite,
  largest: finite,
  converged: z.boolean().default(true),
});
const bodySchema = z.strictObject({
  optimum: z.strictObject({
    x: z.array(finite).min(1),
    loss: finite,
    gradientNorm: finite,
    iterations: z.number().int().nonnegative(),
  }),
  constants: z.strictObject({
    smoothness: finite.nullable(),
    strongConvexity: finite.nullable(),
    heterogeneity: finite,
  }),
  details: z
    .strictObject({
      hessianAtOptimum: curvature,
      clients: z.array(
        z.strictObject({
          smoothness: finite,
          strongConvexity: finite,
          gradientNormAtOptimum: finite,
          minimizerDistance: finite.nullable(),
        }),
      ),
    })
    .nullable(),
  reference: z
    .strictObject({
      iterationsMax: z.number().int().positive(),
      ending: z.enum(['budget', 'stationary', 'no-decrease']),
    })
    .optional(),
});

/** ROUNDWIRE_CACHE_DIR, or roundwire/oracle under $XDG_CACHE_HOME or ~/.cache. */
export function theoryCacheDir(env: NodeJS.ProcessEnv = process.env): string {
  const chosen = env.ROUNDWIRE_CACHE_DIR;
  if (chosen !== undefined && chosen !== '') return resolve(chosen);
  const base = env.XDG_CACHE_HOME ? env.XDG_CACHE_HOME : join(homedir(), '.cache');
  return join(base, 'roundwire', 'oracle');
}

function sha256(text: string): string {
  return createHash('sha256').update(text).digest('hex');
}

export function entryFileName(problemHash: string, oracleVersion: number): string {
  return `${problemHash}.oracle-${oracleVersion}.json`;
}

/** A store in `dir`; `warn` hears about entries it ignores and writes that fail. */
export function diskTheoryStore(dir: string, warn: (message: string) => void): TheoryStore {
  return {
    warn,
    read(problemHash, oracleVersion) {
      const file = join(dir, entryFileName(problemHash, oracleVersion));
      let text: string;
      try {
        text = readFileSync(file, 'utf8');
      } catch {
        return null;
      }
      const ignored = (why: string) => {
        warn(`ignoring the oracle cache entry ${file}: ${why}`);
        return null;
      };
      if (text.length > ENTRY_BYTES_MAX) return ignored('too large');
      const newline = text.indexOf('\n');
      if (newline < 0) return ignored('no header line');
      let header: z.infer<typeof headerSchema>;
      let body: StoredTheory;
      try {
        header = headerSchema.parse(JSON.parse(text.slice(0, newline)));
      } catch {
        return ignored('the header is not a roundwire oracle cache header');
      }
      if (header.problemHash !== problemHash || header.oracleVersion !== oracleVersion)
        return ignored('it belongs to another problem or oracle version');
      const bodyText = text.slice(newline + 1);
      if (sha256(bodyText) !== header.bodySha256) return ignored('its hash does not match');
      try {
        body = bodySchema.parse(JSON.parse(bodyText));
      } catch {
        return ignored('the body does not have the expected shape');
      }
      return body;
    },
    write(problemHash, oracleVersion, entry) {
      const bodyText = JSON.stringify(entry);
      const header = { format: FORMAT, oracleVersion, problemHash, bodySha256: sha256(bodyText) };
      const file = join(dir, entryFileName(problemHash, oracleVersion));
      const temporary = `${file}.${process.pid}-${randomBytes(6).toString('hex')}.tmp`;
      try {
        mkdirSync(dir, { recursive: true });
        writeFileSync(temporary, `${JSON.stringify(header)}\n${bodyText}`);
        renameSync(temporary, file);
      } catch (error) {
        rmSync(temporary, { force: true });
        warn(`could not write the oracle cache entry ${file} (${(error as Error).message})`);
      }
    },
  };
}
