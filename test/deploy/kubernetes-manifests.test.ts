// The Kubernetes manifests (deploy/kubernetes): the base and every overlay, rendered by the
// kustomize subset (test/support/kustomize-subset.ts) from a copy holding a fresh key file, and
// every object validated against the Kubernetes API schemas (kubernetes-models). Then what the
// objects must say to each other and to the image: the coordinator's Service reaches the port it
// listens on and the workers join that Service; the worker count is the workers Job's
// parallelism and the coordinator waits for that many; the shared key is a Secret's file, never
// an environment variable's value; the scenario and the Grafana dashboard are the repository's
// files; requests cover the scenario's memory estimate (src/engine/memory-estimate.ts, the
// README's memory table) plus Node itself; the example scrape job finds each pod's metrics port.

import { cpSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { basename, join } from 'node:path';
import { ConfigMap } from 'kubernetes-models/v1/ConfigMap';
import { PersistentVolumeClaim } from 'kubernetes-models/v1/PersistentVolumeClaim';
import { Secret } from 'kubernetes-models/v1/Secret';
import { Service } from 'kubernetes-models/v1/Service';
import { Job } from 'kubernetes-models/batch/v1/Job';
import { parse as parseYaml } from 'yaml';
import { afterAll, describe, expect, it } from 'vitest';
import { estimateRunMemory } from '../../src/engine/memory-estimate.js';
import { scenarioFromText } from '../../src/scenario/load-scenario.js';
import { readStages } from '../support/dockerfile-instructions.js';
import {
  kustomizationFolders,
  renderKustomization,
  type KubeObject,
} from '../support/kustomize-subset.js';
import { repoRoot } from '../repository/repository-files.js';

/** A kind's schema check, by apiVersion/kind; a kind missing here fails the test. */
const VALIDATORS: Record<string, (o: KubeObject) => void> = {
  'batch/v1/Job': (o) => new Job(o as never).validate(),
  'v1/Service': (o) => new Service(o as never).validate(),
  'v1/ConfigMap': (o) => new ConfigMap(o as never).validate(),
  'v1/Secret': (o) => new Secret(o as never).validate(),
  'v1/PersistentVolumeClaim': (o) => new PersistentVolumeClaim(o as never).validate(),
};

/** Node's own memory, which no estimate counts: at most 150 MiB a process (README.md, "Limits"). */
const NODE_PROCESS_MIB = 150;
const MIB = 1024 * 1024;

/** The bundled scenario each rendering runs (its ConfigMap holds a copy). */
const SCENARIO_OF: Record<string, string> = {
  base: 'quickstart.yaml',
  'wide-least-squares': 'wide-least-squares.yaml',
};

interface Container {
  name: string;
  image: string;
  command?: string[];
  args?: string[];
  env?: { name: string; value?: string; valueFrom?: unknown }[];
  ports?: { name?: string; containerPort: number }[];
  volumeMounts?: { name: string; mountPath: string }[];
  resources: { requests: Record<string, string>; limits: Record<string, string> };
}
interface PodSpec {
  securityContext: { runAsNonRoot: boolean; runAsUser: number };
  initContainers?: Container[];
  containers: Container[];
  volumes: {
    name: string;
    configMap?: { name: string };
    secret?: { secretName: string };
    persistentVolumeClaim?: { claimName: string };
  }[];
}
interface JobObject {
  metadata: { name: string };
  spec: {
    parallelism?: number;
    completions?: number;
    template: {
      metadata: { labels: Record<string, string>; annotations: Record<string, string> };
      spec: PodSpec;
    };
  };
}

/** Bytes of a memory quantity in the binary units used here (Ki, Mi, Gi). */
function memoryBytes(quantity: string): number {
  const match = /^(\d+)(Ki|Mi|Gi)$/.exec(quantity);
  if (match === null)
    throw new Error(`memory quantity ${quantity}: expected a whole number of Ki, Mi or Gi`);
  return Number(match[1]) * { Ki: 1024, Mi: MIB, Gi: 1024 * MIB }[match[2] as 'Ki' | 'Mi' | 'Gi'];
}

/** Cores of a CPU quantity: whole cores or millicores. */
function cpuCores(quantity: string): number {
  const match = /^(\d+)(m?)$/.exec(quantity);
  if (match === null) throw new Error(`cpu quantity ${quantity}: expected cores or millicores`);
  return Number(match[1]) / (match[2] === 'm' ? 1000 : 1);
}

function optionValue(args: readonly string[], option: string): string {
  const at = args.indexOf(option);
  expect(at, `${option} in ${args.join(' ')}`).toBeGreaterThanOrEqual(0);
  return args[at + 1];
}

const copy = mkdtempSync(join(tmpdir(), 'roundwire-manifests-'));
cpSync(join(repoRoot, 'deploy/kubernetes'), copy, { recursive: true });
const keyText = 'a-key-written-for-the-manifest-test-0123456789';
writeFileSync(join(copy, 'base/roundwire.key'), keyText, { mode: 0o600 });
afterAll(() => rmSync(copy, { recursive: true, force: true }));

const renderings = kustomizationFolders(copy).map((folder) => ({
  name: basename(folder),
  objects: renderKustomization(folder),
}));

const imageStages = readStages(readFileSync(join(repoRoot, 'Dockerfile'), 'utf8'));
const runStage = imageStages[imageStages.length - 1];
const imageWorkdir = runStage.instructions.filter((i) => i.keyword === 'WORKDIR').pop()!.text;
const imageUser = Number(
  runStage.instructions
    .filter((i) => i.keyword === 'USER')
    .pop()!
    .text.split(':')[0],
);
const version = (
  JSON.parse(readFileSync(join(repoRoot, 'package.json'), 'utf8')) as { version: string }
).version;

function find<T>(objects: KubeObject[], kind: string, name: string): T {
  const found = objects.find((o) => o.kind === kind && o.metadata.name === name);
  expect(found, `${kind} ${name}`).toBeDefined();
  return found as unknown as T;
}

function containerOf(job: JobObject, name: string): Container {
  const found = job.spec.template.spec.containers.find((c) => c.name === name);
  expect(found, `container ${name} of ${job.metadata.name}`).toBeDefined();
  return found!;
}

describe('the Kubernetes manifests', () => {
  it('render the base and the example overlay', () => {
    expect(renderings.map((r) => r.name)).toEqual(['base', 'wide-least-squares']);
  });

  it('refuse to render without the key file the user writes', () => {
    const bare = mkdtempSync(join(tmpdir(), 'roundwire-manifests-bare-'));
    try {
      cpSync(join(repoRoot, 'deploy/kubernetes/base'), bare, { recursive: true });
      rmSync(join(bare, 'roundwire.key'), { force: true });
      expect(() => renderKustomization(bare)).toThrow(/roundwire\.key/);
    } finally {
      rmSync(bare, { recursive: true, force: true });
    }
  });

  describe.each(renderings)('$name', ({ name, objects }) => {
    const coordinatorJob = find<JobObject>(objects, 'Job', 'roundwire-coordinator');
    const workersJob = find<JobObject>(objects, 'Job', 'roundwire-workers');
    const coordinator = containerOf(coordinatorJob, 'coordinator');
    const worker = containerOf(workersJob, 'worker');
    const scenarioMap = find<{ data: Record<string, string> }>(
      objects,
      'ConfigMap',
      'roundwire-scenario',
    );

    it('validates every object against the Kubernetes API schemas', () => {
      for (const o of objects) {
        const validate = VALIDATORS[`${o.apiVersion}/${o.kind}`];
        expect(validate, `a validator for ${o.apiVersion} ${o.kind}`).toBeDefined();
        expect(() => validate(o), `${o.kind} ${o.metadata.name}`).not.toThrow();
      }
      expect(objects.map((o) => o.kind).sort()).toEqual([
        'ConfigMap',
        'ConfigMap',
        'Job',
        'Job',
        'PersistentVolumeClaim',
        'Secret',
        'Service',
      ]);
    });

    it("runs the image's entry point with the CLI's arguments, as a user who is not root", () => {
      for (const [job, container, command] of [
        [coordinatorJob, coordinator, 'coordinator'],
        [workersJob, worker, 'worker'],
      ] as const) {
        expect(container.image).toBe(`roundwire:${version}`);
        expect(container.command).toBeUndefined();
        expect(container.args![0]).toBe(command);
        expect(job.spec.template.spec.securityContext.runAsNonRoot).toBe(true);
        expect(job.spec.template.spec.securityContext.runAsUser).toBe(imageUser);
      }
    });

    it('runs the scenario of its ConfigMap, a bundled scenario as it is', () => {
      const text = scenarioMap.data['scenario.yaml'];
      expect(text).toBe(readFileSync(join(repoRoot, 'scenarios', SCENARIO_OF[name]), 'utf8'));
      const mount = coordinator.volumeMounts!.find((m) =>
        coordinator.args![1].startsWith(`${m.mountPath}/`),
      )!;
      const volume = coordinatorJob.spec.template.spec.volumes.find((v) => v.name === mount.name)!;
      expect(volume.configMap?.name).toBe('roundwire-scenario');
      expect(coordinator.args![1]).toBe(`${mount.mountPath}/scenario.yaml`);
    });

    it('joins the workers to the Service in front of the port the coordinator listens on', () => {
      const service = find<{
        spec: {
          selector: Record<string, string>;
          ports: { name: string; port: number; targetPort: string }[];
        };
      }>(objects, 'Service', 'roundwire-coordinator');
      const labels = coordinatorJob.spec.template.metadata.labels;
      for (const [key, value] of Object.entries(service.spec.selector))
        expect(labels[key]).toBe(value);
      expect(workersJob.spec.template.metadata.labels['app.kubernetes.io/component']).not.toBe(
        labels['app.kubernetes.io/component'],
      );
      const listenPort = Number(optionValue(coordinator.args!, '--listen').split(':')[1]);
      const joined = new URL(worker.args![1]);
      expect(joined.protocol).toBe('ws:');
      expect(joined.hostname).toBe('roundwire-coordinator');
      const port = service.spec.ports.find((p) => p.port === Number(joined.port))!;
      expect(port, `a Service port ${joined.port}`).toBeDefined();
      const target = coordinator.ports!.find((p) => p.name === port.targetPort)!;
      expect(target.containerPort).toBe(listenPort);
    });

    it('counts its workers in one field, and the coordinator waits for that many', () => {
      const count = workersJob.spec.parallelism!;
      expect(count).toBeGreaterThan(0);
      // No completions: a parallel Job done once its workers are (they end with the run).
      expect(workersJob.spec.completions).toBeUndefined();
      expect(Number(optionValue(coordinator.args!, '--workers-min'))).toBe(count);
      const clients = scenarioFromText(scenarioMap.data['scenario.yaml'], 'scenario.yaml').clients
        .count;
      expect(Number(optionValue(worker.args!, '--capacity')) * count).toBeGreaterThanOrEqual(
        clients,
      );
      // Workers may start well before the coordinator listens.
      expect(
        Number(optionValue(worker.args!, '--coordinator-wait-seconds')),
      ).toBeGreaterThanOrEqual(300);
    });

    it('hands the shared key over as a Secret mounted as a file, never as an environment value', () => {
      const secret = find<{ data: Record<string, string> }>(objects, 'Secret', 'roundwire-key');
      expect(Buffer.from(secret.data.key, 'base64').toString('utf8')).toBe(keyText);
      for (const job of [coordinatorJob, workersJob]) {
        const pod = job.spec.template.spec;
        const secretVolume = pod.volumes.find((v) => v.secret?.secretName === 'roundwire-key')!;
        expect(secretVolume, `${job.metadata.name} mounts the key Secret`).toBeDefined();
        const everyContainer = [...(pod.initContainers ?? []), ...pod.containers];
        for (const c of everyContainer)
          for (const variable of c.env ?? []) {
            expect(variable.valueFrom, `${c.name}: ${variable.name}`).toBeUndefined();
            expect(variable.value).not.toContain(keyText);
          }
        // The main container reads a private copy of the Secret's file (the kubelet leaves it
        // readable by fsGroup, which roundwire refuses); the init container makes it.
        const main = pod.containers[0];
        const keyFile = main.env!.find((v) => v.name === 'ROUNDWIRE_KEY_FILE')!.value!;
        const keyMount = main.volumeMounts!.find((m) => keyFile.startsWith(`${m.mountPath}/`))!;
        const copier = pod.initContainers!.find((c) =>
          c.volumeMounts!.some((m) => m.name === secretVolume.name),
        )!;
        const secretMount = copier.volumeMounts!.find((m) => m.name === secretVolume.name)!;
        expect(copier.volumeMounts!.map((m) => m.name)).toContain(keyMount.name);
        expect(copier.command!.join(' ')).toContain(
          `umask 077 && cp ${secretMount.mountPath}/key ${keyFile}`,
        );
      }
    });

    it('keeps the results on a claimed volume at the folder a run writes to by default', () => {
      find(objects, 'PersistentVolumeClaim', 'roundwire-results');
      const pod = coordinatorJob.spec.template.spec;
      const volume = pod.volumes.find(
        (v) => v.persistentVolumeClaim?.claimName === 'roundwire-results',
      )!;
      const mount = coordinator.volumeMounts!.find((m) => m.name === volume.name)!;
      // README.md, "Results folder": results/<scenario>-<method>-<time> below the working directory.
      expect(mount.mountPath).toBe(`${imageWorkdir}/results`);
      expect(coordinator.args).not.toContain('--out');
    });

    it('asks Prometheus to scrape the metrics port each process serves, and ships the dashboard', () => {
      for (const [job, container] of [
        [coordinatorJob, coordinator],
        [workersJob, worker],
      ] as const) {
        const annotations = job.spec.template.metadata.annotations;
        expect(annotations['prometheus.io/scrape']).toBe('true');
        const metricsPort = optionValue(container.args!, '--metrics').split(':')[1];
        expect(annotations['prometheus.io/port']).toBe(metricsPort);
        expect(container.ports!.map((p) => p.containerPort)).toContain(Number(metricsPort));
        expect(annotations['prometheus.io/path']).toBe('/metrics');
      }
      const dashboard = find<{
        metadata: { labels: Record<string, string> };
        data: Record<string, string>;
      }>(objects, 'ConfigMap', 'roundwire-grafana-dashboard');
      expect(dashboard.data['roundwire.json']).toBe(
        readFileSync(join(repoRoot, 'grafana/dashboards/roundwire.json'), 'utf8'),
      );
      expect(dashboard.metadata.labels.grafana_dashboard).toBe('1');
    });

    it("requests the scenario's estimated memory plus Node's own, within its limits", () => {
      const count = workersJob.spec.parallelism!;
      const scenario = scenarioFromText(scenarioMap.data['scenario.yaml'], 'scenario.yaml', [
        `run.workers:${count}`,
      ]);
      const estimate = estimateRunMemory(scenario);
      for (const [container, estimateBytes] of [
        [coordinator, estimate.coordinatorBytes],
        [worker, estimate.workerBytes],
      ] as const) {
        const { requests, limits } = container.resources;
        expect(memoryBytes(requests.memory), container.name).toBeGreaterThanOrEqual(
          estimateBytes + NODE_PROCESS_MIB * MIB,
        );
        expect(memoryBytes(limits.memory)).toBeGreaterThanOrEqual(memoryBytes(requests.memory));
        expect(cpuCores(limits.cpu)).toBeGreaterThanOrEqual(cpuCores(requests.cpu));
      }
    });
  });
});

describe('the example Prometheus scrape job', () => {
  const config = parseYaml(
    readFileSync(join(repoRoot, 'deploy/kubernetes/prometheus-scrape.yaml'), 'utf8'),
  ) as {
    scrape_configs: {
      relabel_configs: {
        source_labels?: string[];
        regex?: string;
        replacement?: string;
        target_label?: string;
        action?: string;
      }[];
    }[];
  };

  /**
   * Prometheus' relabelling (its configuration reference, <relabel_config>) for the actions used:
   * keep and replace, source labels joined by ";", the regex anchored at both ends, replacement
   * "$1" by default. Returns null for a target dropped.
   */
  function relabel(labels: Record<string, string>): Record<string, string> | null {
    const out = { ...labels };
    for (const rule of config.scrape_configs[0].relabel_configs) {
      const value = (rule.source_labels ?? []).map((l) => out[l] ?? '').join(';');
      const match = new RegExp(`^(?:${rule.regex ?? '(.*)'})$`).exec(value);
      const action = rule.action ?? 'replace';
      if (action === 'keep') {
        if (match === null) return null;
      } else if (action === 'replace') {
        if (match !== null)
          out[rule.target_label!] = (rule.replacement ?? '$1').replace(
            /\$(\d)/g,
            (_, i: string) => match[Number(i)] ?? '',
          );
      } else throw new Error(`relabel action ${action} is not simulated here`);
    }
    return out;
  }

  /** What Kubernetes service discovery gives a pod target (Prometheus' <kubernetes_sd_config>, role pod). */
  function podTarget(job: JobObject, container: Container, ip: string): Record<string, string> {
    const labels: Record<string, string> = {
      __address__: `${ip}:${container.ports![0].containerPort}`,
      __metrics_path__: '/metrics',
      __meta_kubernetes_pod_name: `${job.metadata.name}-x1y2z`,
    };
    const sanitize = (name: string): string => name.replace(/[^a-zA-Z0-9_]/g, '_');
    for (const [k, v] of Object.entries(job.spec.template.metadata.annotations))
      labels[`__meta_kubernetes_pod_annotation_${sanitize(k)}`] = v;
    for (const [k, v] of Object.entries(job.spec.template.metadata.labels))
      labels[`__meta_kubernetes_pod_label_${sanitize(k)}`] = v;
    return labels;
  }

  it('scrapes each roundwire pod at the metrics port and path its annotations name', () => {
    const objects = renderings[0].objects;
    const coordinatorJob = find<JobObject>(objects, 'Job', 'roundwire-coordinator');
    const workersJob = find<JobObject>(objects, 'Job', 'roundwire-workers');
    const coordinatorTarget = relabel(
      podTarget(coordinatorJob, containerOf(coordinatorJob, 'coordinator'), '10.0.0.7'),
    );
    expect(coordinatorTarget).toMatchObject({
      __address__: '10.0.0.7:9464',
      __metrics_path__: '/metrics',
      component: 'coordinator',
    });
    const workerTarget = relabel(
      podTarget(workersJob, containerOf(workersJob, 'worker'), '10.0.0.8'),
    );
    expect(workerTarget).toMatchObject({ __address__: '10.0.0.8:9465', component: 'worker' });
    const unannotated = podTarget(workersJob, containerOf(workersJob, 'worker'), '10.0.0.9');
    delete unannotated.__meta_kubernetes_pod_annotation_prometheus_io_scrape;
    expect(relabel(unannotated)).toBeNull();
  });
});
