// How large a method's states are, from the scenario alone, before anything is built: the memory
// estimate counts them and the prediction refuses a round map too large to hold. Every
// Float64Array leaf of a method's state has the model's dimension, so a state at dimension 1
// gives its vectors per dimension.

import type { Scenario } from '../scenario/schema.js';
import { methodByName } from '../algorithm/registry.js';
import type { MethodConfig } from '../algorithm/method.js';
import { stateLength } from './state-vector.js';

/** Float64 values per model dimension in a method's client and server states. */
export function stateVectorsPerDimension(scenario: Scenario): { client: number; server: number } {
  const method = methodByName(scenario.method.name);
  // Only the states' shapes matter here: any valid configuration gives the same vectors.
  const config: MethodConfig = {
    clientCount: scenario.clients.count,
    stepSize: 1,
    serverStepSize: scenario.method.serverStepSize,
    proxCoefficient: scenario.method.proxCoefficient,
    proxTolerance: scenario.method.proxTolerance,
  };
  return {
    client: stateLength(method.initClient(1, config, 0)),
    server: stateLength(method.initServer(1, config, new Float64Array(1))),
  };
}

/** Entries of the whole state the round map walks: the server's and every client's, at dimension `dim`. */
export function roundMapStateEntries(scenario: Scenario, dim: number): number {
  const vectors = stateVectorsPerDimension(scenario);
  return (vectors.server + scenario.clients.count * vectors.client) * dim;
}
