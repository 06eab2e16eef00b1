// The command line and environment of a container of the Kubernetes manifests
// (deploy/kubernetes/base), made runnable on this machine: the harness of the multi-host tests
// starts its processes with them, so that a test exercises what the manifests run and a change
// to a manifest's arguments reaches the tests.
//
// The image runs `roundwire` in its working directory (IMAGE_WORKDIR). Here:
// - every volume a container mounts becomes a folder of the test's own, and an argument or an
//   environment value under a mount path points into that folder instead;
// - a mount under the image's working directory (the results volume) lands under the local
//   working directory at the same relative path, so the coordinator's default results folder
//   (results/<scenario>-<method>-<time>, relative to it) lands on the "volume" as in the pod;
// - the Service's name in a worker's URL becomes the coordinator's address, given by the caller.

import { readFileSync } from 'node:fs';
import { join, relative } from 'node:path';
import { parseAllDocuments } from 'yaml';
import { repoRoot } from './cli-process.js';

/** The image's working directory, where its results volume is mounted beneath. */
export const IMAGE_WORKDIR = '/opt/roundwire';

const MANIFESTS_DIR = join(repoRoot, 'deploy/kubernetes/base');

interface Container {
  name: string;
  args?: string[];
  env?: { name: string; value?: string }[];
  volumeMounts?: { name: string; mountPath: string }[];
}

interface ManifestObject {
  kind: string;
  metadata: { name: string };
  spec: {
    template?: { spec: { containers: Container[] } };
    ports?: { name?: string; port: number }[];
  };
}

function objectsOf(file: string): ManifestObject[] {
  return parseAllDocuments(readFileSync(join(MANIFESTS_DIR, file), 'utf8')).map(
    (d) => d.toJS() as ManifestObject,
  );
}

function containerOf(file: string, containerName: string): Container {
  for (const o of objectsOf(file)) {
    const found = o.spec.template?.spec.containers.find((c) => c.name === containerName);
    if (found !== undefined) return found;
  }
  throw new Error(`${file}: no container named "${containerName}"`);
}

/** The coordinator Service's name and its rounds port, as workers address it. */
export function coordinatorService(): { name: string; port: number } {
  const service = objectsOf('coordinator.yaml').find((o) => o.kind === 'Service');
  const port = service?.spec.ports?.find((p) => p.name === 'rounds')?.port;
  if (service === undefined || port === undefined)
    throw new Error('coordinator.yaml: no Service with a "rounds" port');
  return { name: service.metadata.name, port };
}

/** A container's command made local: arguments after the entry point, and environment. */
export interface LocalCommand {
  args: string[];
  env: Record<string, string>;
  /** local folder of each volume the container mounts, by volume name */
  volumes: Record<string, string>;
  /** the working directory to start it in */
  workdir: string;
}

/**
 * The container's arguments and environment with every mount path moved under `root` (the
 * working directory is `root/workdir`; other volumes are `root/volumes/<name>`), and each
 * `replace` applied to the argument right after its option (e.g. `--workers-min`).
 */
export function localCommand(
  file: 'coordinator.yaml' | 'workers.yaml',
  containerName: string,
  root: string,
  replace: Readonly<Record<string, string>> = {},
): LocalCommand {
  const container = containerOf(file, containerName);
  const workdir = join(root, 'workdir');
  const volumes: Record<string, string> = {};
  const mounts = (container.volumeMounts ?? []).map((m) => {
    const inWorkdir = relative(IMAGE_WORKDIR, m.mountPath);
    const local = inWorkdir.startsWith('..')
      ? join(root, 'volumes', m.name)
      : join(workdir, inWorkdir);
    volumes[m.name] = local;
    return { mountPath: m.mountPath, local };
  });
  const localPath = (value: string): string => {
    const mount = mounts.find((m) => value === m.mountPath || value.startsWith(`${m.mountPath}/`));
    return mount === undefined ? value : mount.local + value.slice(mount.mountPath.length);
  };
  const args = (container.args ?? []).map(localPath);
  for (const [option, value] of Object.entries(replace)) {
    const at = args.indexOf(option);
    if (at < 0 || at + 1 >= args.length)
      throw new Error(`${file}: container "${containerName}" has no ${option} to replace`);
    args[at + 1] = value;
  }
  const env: Record<string, string> = {};
  for (const e of container.env ?? []) if (e.value !== undefined) env[e.name] = localPath(e.value);
  return { args, env, volumes, workdir };
}
