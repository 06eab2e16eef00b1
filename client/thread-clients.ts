// Which pool thread computes which of a worker's clients. Each client stays on one thread for
// the run, so that each thread builds only its own clients' shards (a client free to run on any
// thread ends up with its shard built on every thread). Clients are dealt heaviest first to the
// least loaded thread (longest processing time first), their load the flops of one exchange, so
// that equal clients split evenly and unequal ones stay balanced. Ties go to the lower client id
// and the lower thread, so the deal is the same on every run; no result depends on it.

import type { WirePlan } from '../src/engine/run-plan.js';
import { exchangeFlopsOf } from './hosting-mode.js';

/** Each thread's clients, ascending, for `threads` threads (none left empty when clients suffice). */
export function clientsByThread(
  plan: WirePlan,
  clientIds: readonly number[],
  threads: number,
): number[][] {
  const flopsOf = exchangeFlopsOf(plan, clientIds);
  const load = clientIds.map((id, i) => ({ id, flops: flopsOf[i] }));
  load.sort((a, b) => b.flops - a.flops || a.id - b.id);
  const dealt: number[][] = Array.from({ length: threads }, () => []);
  const totals = new Array<number>(threads).fill(0);
  for (const { id, flops } of load) {
    let least = 0;
    for (let t = 1; t < threads; t++)
      if (
        totals[t] < totals[least] ||
        (totals[t] === totals[least] && dealt[t].length < dealt[least].length)
      )
        least = t;
    dealt[least].push(id);
    totals[least] += flops;
  }
  return dealt.filter((ids) => ids.length > 0).map((ids) => ids.sort((a, b) => a - b));
}
