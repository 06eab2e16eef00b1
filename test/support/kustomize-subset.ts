// Renders a kustomization folder the way `kubectl apply -k` would, for the part of kustomize
// that deploy/kubernetes uses, so that a test can validate what an overlay really produces
// without kustomize installed. Anything outside that part is refused with an error naming it,
// never ignored, so a manifest that grows past the subset fails its test instead of passing it
// unrendered. The subset (field names as in kustomize's Kustomization, v1beta1):
//
// - resources: YAML files (several documents each) and folders holding a kustomization.yaml,
//   rendered first, in order.
// - configMapGenerator, secretGenerator: `files` (KEY=PATH or PATH, read relative to the
//   kustomization's folder and refused outside it, as kustomize's default load restrictor
//   does) and `literals` (KEY=VALUE); `behavior` create (the default), replace or merge against
//   a generated object of the same name from a resource folder; `options.labels`; a Secret's
//   `type`. Secret values are base64, as kustomize writes them.
// - generatorOptions: `labels`, and `disableNameSuffixHash`, which must be true: the content
//   hash suffix and the renaming of its references are not in the subset.
// - patches: a `path` or an inline `patch` holding a strategic merge patch, matched to its
//   object by apiVersion, kind and metadata.name (no `target`, no JSON 6902). Maps merge key by
//   key, a null value deletes, and lists merge element by element on the merge keys Kubernetes
//   declares for the fields used here (containers, initContainers, volumes and env by name,
//   volumeMounts by mountPath, a container's ports by containerPort, a Service's by port);
//   every other list is replaced whole, as the strategic merge patch does for lists without a
//   merge key (args, command, a podFailurePolicy's rules).
// - YAML: a plain number with a leading zero is refused, since kustomize reads it as YAML 1.1
//   octal and the yaml package as a YAML 1.2 decimal; write such a number in decimal.
// Checked against kustomize 5.5.0 (`kubectl kustomize`) on deploy/kubernetes: the same objects.

import { readdirSync, readFileSync, statSync } from 'node:fs';
import { isAbsolute, join, relative, resolve } from 'node:path';
import { parseAllDocuments, parse as parseYaml } from 'yaml';

export type KubeObject = {
  apiVersion: string;
  kind: string;
  metadata: { name: string; labels?: Record<string, string> } & Record<string, unknown>;
} & Record<string, unknown>;

const KNOWN_FIELDS = new Set([
  'apiVersion',
  'kind',
  'resources',
  'configMapGenerator',
  'secretGenerator',
  'generatorOptions',
  'patches',
]);

/** A list's merge key under a parent field, as the Kubernetes API declares it (x-kubernetes-patch-merge-key). */
function mergeKeyOf(field: string, parentPath: readonly string[]): string | null {
  switch (field) {
    case 'containers':
    case 'initContainers':
    case 'volumes':
    case 'env':
      return 'name';
    case 'volumeMounts':
      return 'mountPath';
    case 'ports':
      // A Service's ports (spec.ports) merge on port; a container's on containerPort.
      return parentPath.length === 1 && parentPath[0] === 'spec' ? 'port' : 'containerPort';
    default:
      return null;
  }
}

function isMap(value: unknown): value is Record<string, unknown> {
  return typeof value === 'object' && value !== null && !Array.isArray(value);
}

/** The strategic merge of `patch` into `target` (both left unchanged). */
export function strategicMerge(target: unknown, patch: unknown, path: string[] = []): unknown {
  if (!isMap(target) || !isMap(patch)) return structuredClone(patch);
  const out: Record<string, unknown> = structuredClone(target);
  for (const [key, value] of Object.entries(patch)) {
    if (key.startsWith('$')) throw new Error(`patch directive ${key} is not in the subset`);
    if (value === null) {
      delete out[key];
      continue;
    }
    const mergeKey = Array.isArray(value) ? mergeKeyOf(key, path) : null;
    if (mergeKey !== null && Array.isArray(out[key])) {
      const merged = structuredClone(out[key] as Record<string, unknown>[]);
      for (const element of value as Record<string, unknown>[]) {
        if (!isMap(element) || element[mergeKey] === undefined)
          throw new Error(
            `${[...path, key].join('.')}: an element without its merge key ${mergeKey}`,
          );
        const at = merged.findIndex((e) => e[mergeKey] === element[mergeKey]);
        if (at < 0) merged.push(structuredClone(element));
        else
          merged[at] = strategicMerge(merged[at], element, [...path, key]) as Record<
            string,
            unknown
          >;
      }
      out[key] = merged;
    } else {
      out[key] =
        key in out ? strategicMerge(out[key], value, [...path, key]) : structuredClone(value);
    }
  }
  return out;
}

function refuseUnknown(
  where: string,
  value: Record<string, unknown>,
  known: readonly string[],
): void {
  for (const key of Object.keys(value))
    if (!known.includes(key)) throw new Error(`${where}: ${key} is not in the subset`);
}

/** A path named by a kustomization, kept inside its folder as kustomize's load restrictor keeps it. */
function insideRoot(root: string, path: string): string {
  const full = resolve(root, path);
  const rel = relative(root, full);
  if (rel.startsWith('..') || isAbsolute(rel))
    throw new Error(`${path}: outside the kustomization's folder ${root}`);
  return full;
}

interface Generator {
  name: string;
  behavior?: 'create' | 'replace' | 'merge';
  files?: string[];
  literals?: string[];
  type?: string;
  options?: { labels?: Record<string, string> };
}

function generate(
  root: string,
  kind: 'ConfigMap' | 'Secret',
  generator: Generator,
  commonLabels: Record<string, string>,
): KubeObject {
  refuseUnknown(
    `${kind} generator ${generator.name}`,
    generator as unknown as Record<string, unknown>,
    ['name', 'behavior', 'files', 'literals', 'type', 'options'],
  );
  if (generator.options !== undefined)
    refuseUnknown(`${generator.name}.options`, generator.options, ['labels']);
  const data: Record<string, string> = {};
  for (const entry of generator.files ?? []) {
    const [key, path] = entry.includes('=')
      ? entry.split('=', 2)
      : [entry.split('/').pop()!, entry];
    const text = readFileSync(insideRoot(root, path), 'utf8');
    data[key] = kind === 'Secret' ? Buffer.from(text, 'utf8').toString('base64') : text;
  }
  for (const entry of generator.literals ?? []) {
    const at = entry.indexOf('=');
    const value = entry.slice(at + 1);
    data[entry.slice(0, at)] =
      kind === 'Secret' ? Buffer.from(value, 'utf8').toString('base64') : value;
  }
  const labels = { ...commonLabels, ...(generator.options?.labels ?? {}) };
  return {
    apiVersion: 'v1',
    kind,
    metadata: { name: generator.name, ...(Object.keys(labels).length > 0 ? { labels } : {}) },
    ...(kind === 'Secret' ? { type: generator.type ?? 'Opaque' } : {}),
    data,
  };
}

function sameObject(
  a: KubeObject,
  b: { apiVersion?: unknown; kind?: unknown; metadata?: unknown },
): boolean {
  return (
    a.apiVersion === b.apiVersion &&
    a.kind === b.kind &&
    isMap(b.metadata) &&
    a.metadata.name === b.metadata.name
  );
}

/** Every object the kustomization folder `root` renders to. */
export function renderKustomization(root: string): KubeObject[] {
  const kustomization = parseYaml(readFileSync(join(root, 'kustomization.yaml'), 'utf8')) as Record<
    string,
    unknown
  >;
  refuseUnknown(join(root, 'kustomization.yaml'), kustomization, [...KNOWN_FIELDS]);
  const objects: KubeObject[] = [];
  for (const resource of (kustomization.resources ?? []) as string[]) {
    const path = resolve(root, resource);
    if (statSync(path).isDirectory()) {
      objects.push(...renderKustomization(path));
      continue;
    }
    const text = readFileSync(insideRoot(root, resource), 'utf8');
    // kustomize reads YAML 1.1, where 0400 is octal (256); the yaml package reads 1.2 (400).
    const octal = /^[^#\n]*:\s+0\d+\s*$/m.exec(text);
    if (octal !== null)
      throw new Error(`${resource}: "${octal[0].trim()}" reads differently in YAML 1.1 and 1.2`);
    for (const document of parseAllDocuments(text)) {
      if (document.errors.length > 0) throw new Error(`${resource}: ${document.errors[0].message}`);
      const value = document.toJS() as KubeObject | null;
      if (value !== null) objects.push(value);
    }
  }

  const options = (kustomization.generatorOptions ?? {}) as Record<string, unknown>;
  refuseUnknown('generatorOptions', options, ['disableNameSuffixHash', 'labels']);
  if (
    (kustomization.configMapGenerator !== undefined ||
      kustomization.secretGenerator !== undefined) &&
    options.disableNameSuffixHash !== true
  )
    throw new Error('generated names with a content hash suffix are not in the subset');
  const commonLabels = (options.labels ?? {}) as Record<string, string>;
  const generators: ['ConfigMap' | 'Secret', Generator][] = [
    ...((kustomization.configMapGenerator ?? []) as Generator[]).map(
      (g) => ['ConfigMap', g] as ['ConfigMap', Generator],
    ),
    ...((kustomization.secretGenerator ?? []) as Generator[]).map(
      (g) => ['Secret', g] as ['Secret', Generator],
    ),
  ];
  for (const [kind, generator] of generators) {
    const made = generate(root, kind, generator, commonLabels);
    const at = objects.findIndex((o) => sameObject(o, made));
    const behavior = generator.behavior ?? 'create';
    if (behavior === 'create') {
      if (at >= 0)
        throw new Error(`${kind} ${generator.name} is generated twice (behavior create)`);
      objects.push(made);
    } else {
      if (at < 0)
        throw new Error(`${kind} ${generator.name}: behavior ${behavior} finds nothing to change`);
      objects[at] =
        behavior === 'replace' ? made : (strategicMerge(objects[at], made) as KubeObject);
    }
  }

  for (const entry of (kustomization.patches ?? []) as Record<string, unknown>[]) {
    refuseUnknown('patches', entry, ['path', 'patch']);
    const text =
      typeof entry.path === 'string'
        ? readFileSync(insideRoot(root, entry.path), 'utf8')
        : String(entry.patch);
    const patch = parseYaml(text) as unknown;
    if (!isMap(patch))
      throw new Error('a patch that is not one object (JSON 6902) is not in the subset');
    const at = objects.findIndex((o) => sameObject(o, patch));
    if (at < 0)
      throw new Error(
        `a patch matches no object: ${String(patch.kind)} ${JSON.stringify(patch.metadata)}`,
      );
    objects[at] = strategicMerge(objects[at], patch) as KubeObject;
  }
  return objects;
}

/** The kustomization folders below `root` (each folder holding a kustomization.yaml). */
export function kustomizationFolders(root: string): string[] {
  const out: string[] = [];
  for (const entry of readdirSync(root, { withFileTypes: true })) {
    if (!entry.isDirectory()) continue;
    const folder = join(root, entry.name);
    if (readdirSync(folder).includes('kustomization.yaml')) out.push(folder);
    else out.push(...kustomizationFolders(folder));
  }
  return out.sort();
}
