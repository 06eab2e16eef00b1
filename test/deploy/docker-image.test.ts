// The image recipe (Dockerfile, .dockerignore), read without a Docker engine: a build stage and
// a run stage, the run stage on Node 20 with production dependencies only, a user who is not
// root, `roundwire` as the entry point, and every file the compiled CLI loads copied into it.
// That `npm ci --omit=dev` is enough is checked on package-lock.json: every package the CLI
// imports at run time is one npm installs without the dev dependencies (no "dev" flag).

import { existsSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { DIGITS_PACKAGE } from '../../src/data/digits-dataset.js';
import { VEGA_DATASETS_PACKAGE } from '../../src/data/vega-file.js';
import { readCopy, readStages, type Stage } from '../support/dockerfile-instructions.js';
import { runtimeImports } from '../support/runtime-imports.js';
import { repoRoot } from '../repository/repository-files.js';

const stages = readStages(readFileSync(join(repoRoot, 'Dockerfile'), 'utf8'));
const runStage = stages[stages.length - 1];
const ignored = readFileSync(join(repoRoot, '.dockerignore'), 'utf8')
  .split('\n')
  .map((l) => l.trim())
  .filter((l) => l !== '' && !l.startsWith('#'));
const packageJson = JSON.parse(readFileSync(join(repoRoot, 'package.json'), 'utf8')) as {
  dependencies: Record<string, string>;
  optionalDependencies?: Record<string, string>;
};
const lock = JSON.parse(readFileSync(join(repoRoot, 'package-lock.json'), 'utf8')) as {
  packages: Record<string, { dev?: boolean }>;
};
/** Walked once from the compiled entry point (`npx tsc -p .` first), read by two tests. */
const loaded = runtimeImports(repoRoot, 'bin/roundwire.js');

/** Where a path copied into `stage` lands: relative destinations are below its WORKDIR. */
function copiedPaths(stage: Stage): { from: string | null; source: string; target: string }[] {
  let workdir = '/';
  const out: { from: string | null; source: string; target: string }[] = [];
  for (const instruction of stage.instructions) {
    if (instruction.keyword === 'WORKDIR') workdir = instruction.text;
    if (instruction.keyword !== 'COPY') continue;
    const copy = readCopy(instruction);
    const base = copy.destination.startsWith('/') ? '' : `${workdir}/`;
    for (const source of copy.sources) {
      const into = `${base}${copy.destination}`.replace(/\/\.\//g, '/').replace(/\/\.?$/, '');
      // COPY a b ./: a file keeps its name in a folder destination; COPY dir ./dir keeps the name given.
      const target = copy.destination.endsWith('/') ? `${into}/${source.split('/').pop()}` : into;
      out.push({ from: copy.from, source, target });
    }
  }
  return out;
}

function runCommands(stage: Stage): string[] {
  return stage.instructions
    .filter((i) => i.keyword === 'RUN')
    .map((i) => (i.exec === null ? i.text : i.exec.join(' ')));
}

describe('the image recipe', () => {
  it('builds in one stage and runs from another, on Node 20', () => {
    expect(stages.length).toBeGreaterThanOrEqual(2);
    const build = stages[0];
    expect(build.name).not.toBeNull();
    // The build stage installs the dev dependencies (TypeScript) and compiles.
    expect(runCommands(build).some((c) => /\bnpm ci\b/.test(c) && !/--omit=dev/.test(c))).toBe(
      true,
    );
    expect(runCommands(build).some((c) => /\btsc\b/.test(c))).toBe(true);
    // package.json's engines: Node >= 20.19; the official image's tags name the version.
    expect(runStage.base).toMatch(/^node:20(\.19)?([.-]|$)/);
    expect(runStage.base).not.toMatch(/:latest$|^node$/);
  });

  it('installs production dependencies only in the run stage, and copies none from the build', () => {
    const installs = runCommands(runStage).filter((c) =>
      /\b(npm (ci|install|i)|yarn|pnpm)\b/.test(c),
    );
    expect(installs).toHaveLength(1);
    expect(installs[0]).toMatch(/\bnpm ci\b.*--omit=dev/);
    const fromBuild = copiedPaths(runStage).filter((c) => c.from !== null);
    expect(fromBuild.length).toBeGreaterThan(0);
    for (const copy of fromBuild) {
      expect(copy.from).toBe(stages[0].name);
      expect(copy.source).not.toMatch(/node_modules/);
    }
  });

  it('runs as a user who is not root, set before the entry point, and enters at roundwire', () => {
    const keywords = runStage.instructions.map((i) => i.keyword);
    const users = runStage.instructions.filter((i) => i.keyword === 'USER');
    expect(users.length).toBeGreaterThan(0);
    const user = users[users.length - 1].text;
    expect(user.split(':')[0]).not.toMatch(/^(root|0)$/);
    // Numeric, so that Kubernetes' runAsNonRoot can check it (a name it cannot resolve).
    expect(user).toMatch(/^[1-9]\d*(:\d+)?$/);
    expect(keywords.lastIndexOf('USER')).toBeLessThan(keywords.lastIndexOf('ENTRYPOINT'));
    const entry = runStage.instructions.filter((i) => i.keyword === 'ENTRYPOINT').pop()!;
    expect(entry.exec).not.toBeNull();
    if (entry.exec![0] === 'roundwire') {
      // On the PATH: linked to the copied entry point.
      expect(
        runCommands(runStage).some((c) =>
          /ln -s \S*bin\/roundwire\.js \/usr\/local\/bin\/roundwire\b/.test(c),
        ),
      ).toBe(true);
    } else {
      expect(entry.exec!.slice(0, 2)).toEqual([
        'node',
        expect.stringMatching(/bin\/roundwire\.js$/),
      ]);
    }
  });

  it('copies what a run needs: package files, bin, scenarios and every compiled module the CLI loads', () => {
    const targets = copiedPaths(runStage).map((c) => c.target);
    const workdir = runStage.instructions.filter((i) => i.keyword === 'WORKDIR').pop()!.text;
    for (const needed of ['package.json', 'package-lock.json', 'bin', 'scenarios'])
      expect(targets, needed).toContain(`${workdir}/${needed}`);
    const { files } = loaded;
    // The pool threads' modules are among them: a worker's clients and the coordinator's oracle.
    expect(files).toContain('dist/client/client-task.js');
    expect(files).toContain('dist/server/oracle-task.js');
    for (const file of files.filter((f) => f.startsWith('dist/')))
      expect(
        targets.some((t) => `${workdir}/${file}`.startsWith(`${t}/`)),
        `${file} is not copied into the run stage`,
      ).toBe(true);
  });

  it('copies from the build context only files that exist and that .dockerignore lets through', () => {
    expect(ignored).toEqual(expect.arrayContaining(['node_modules', 'results', 'dist', '.git']));
    const fromContext = stages.flatMap((s) => copiedPaths(s)).filter((c) => c.from === null);
    for (const { source } of fromContext) {
      expect(existsSync(join(repoRoot, source)), source).toBe(true);
      expect(ignored, source).not.toContain(source);
      expect(ignored, source).not.toContain(source.split('/')[0]);
    }
  });

  it('has every package the CLI loads at run time among the production dependencies', () => {
    const packages = new Map(loaded.packages);
    // Read by name at run time (src/data), not imported.
    packages.set(DIGITS_PACKAGE, 'src/data/digits-dataset.ts');
    packages.set(VEGA_DATASETS_PACKAGE, 'src/data/vega-file.ts');
    expect(packages.size).toBeGreaterThan(5);
    const production = {
      ...packageJson.dependencies,
      ...(packageJson.optionalDependencies ?? {}),
    };
    for (const [pkg, importer] of packages) {
      expect(production, `${pkg} (imported by ${importer})`).toHaveProperty([pkg]);
      const entry = lock.packages[`node_modules/${pkg}`];
      expect(entry, `${pkg} in package-lock.json`).toBeDefined();
      expect(entry.dev ?? false, `${pkg} is installed only with the dev dependencies`).toBe(false);
    }
  });
});
