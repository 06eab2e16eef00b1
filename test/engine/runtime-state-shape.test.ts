// A state read from outside (a checkpoint, a coordinator's message) may only replace a state of
// the same kind: restoring a snapshot of another method, dimension or client is refused.

import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import { planFor } from '../../src/engine/in-process-engine.js';
import { ServerRuntime } from '../../src/engine/server-runtime.js';
import { ClientRuntime } from '../../src/engine/client-runtime.js';
import { flattenState, rebuildState, StateTreeError } from '../../src/base/state-tree.js';
import { codeOf } from '../support/error-code.js';

const text = readFileSync(new URL('../../scenarios/quickstart.yaml', import.meta.url), 'utf8');

function runtimesOf(tweaks: string[]) {
  const { plan, theory } = planFor(scenarioFromText(text, 'quickstart.yaml', tweaks));
  return {
    server: new ServerRuntime(plan),
    client: new ClientRuntime(plan, 0, theory.instance.objectives[0]),
  };
}

describe('state trees', () => {
  it('refuse a snapshot of another method, dimension or client', () => {
    const fedlin = runtimesOf([]);
    const scaffold = runtimesOf(['method.name:scaffold']);
    const wider = runtimesOf(['data.features:12']);
    expect(codeOf(() => fedlin.server.restore(scaffold.server.snapshot()), StateTreeError)).toBe(
      'E_STATE_TREE',
    );
    expect(codeOf(() => fedlin.server.restore(wider.server.snapshot()), StateTreeError)).toBe(
      'E_STATE_TREE',
    );
    expect(
      codeOf(() => fedlin.client.restoreChecked(scaffold.client.snapshot()), StateTreeError),
    ).toBe('E_STATE_TREE');
    expect(() => fedlin.server.restore(fedlin.server.snapshot())).not.toThrow();
  });

  it('refuse references to vectors that are not there and markers they do not know', () => {
    const flat = flattenState({ x: new Float64Array(3) });
    expect(codeOf(() => rebuildState({ tree: flat.tree, vectors: [] }), StateTreeError)).toBe(
      'E_STATE_TREE',
    );
    expect(
      codeOf(() => rebuildState({ tree: { x: { $map: 1 } }, vectors: [] }), StateTreeError),
    ).toBe('E_STATE_TREE');
    expect(codeOf(() => flattenState({ m: new Map() }), StateTreeError)).toBe('E_STATE_TREE');
  });
});
