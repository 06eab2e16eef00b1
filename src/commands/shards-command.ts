// `roundwire shards <scenario> --out DIR`: every client's shard as CSV (features, then target),
// so that a run can be reproduced in another tool. Numbers are written in JavaScript's shortest
// round-trip form, so reading them back gives the same doubles.

import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import type { Scenario } from '../scenario/schema.js';
import { buildShard } from '../data/build-shard.js';
import type { Shard } from '../problem/shard.js';

export function shardCsv(shard: Shard): string {
  const p = shard.featureCount;
  const header = [...Array.from({ length: p }, (_, j) => `x${j}`), 'target'].join(',');
  const lines = [header];
  for (let r = 0; r < shard.sampleCount; r++) {
    const row: string[] = new Array<string>(p + 1);
    for (let c = 0; c < p; c++) row[c] = String(shard.features[r * p + c]);
    row[p] = String(shard.targets[r]);
    lines.push(row.join(','));
  }
  return `${lines.join('\n')}\n`;
}

export function shardFileName(clientId: number, clientCount: number): string {
  return `client-${String(clientId).padStart(Math.max(3, String(clientCount - 1).length), '0')}.csv`;
}

/** Writes one CSV per client and returns the file paths. */
export function writeShards(scenario: Scenario, outDir: string): string[] {
  mkdirSync(outDir, { recursive: true });
  const files: string[] = [];
  for (let id = 0; id < scenario.clients.count; id++) {
    const file = join(outDir, shardFileName(id, scenario.clients.count));
    writeFileSync(file, shardCsv(buildShard(scenario, id)));
    files.push(file);
  }
  return files;
}
