// What the compiled CLI loads at run time: the compiled files reached from bin/roundwire.js by
// relative imports (static and dynamic, found by TypeScript's own pre-processor), the pool
// threads' modules named to compiledModulePath, and the packages imported on the way. Data set
// packages read by name through src/data/package-files.ts are not imports; the caller adds them.

import { readFileSync } from 'node:fs';
import { builtinModules } from 'node:module';
import { dirname, relative, resolve } from 'node:path';
import ts from 'typescript';

export interface RuntimeImports {
  /** compiled files reached, relative to the repository root (bin/roundwire.js, dist/...) */
  files: string[];
  /** package names imported (no built-in module), each with a file that imports it */
  packages: Map<string, string>;
}

const BUILTINS = new Set(builtinModules);

/** `ws` of `ws/lib/sender.js`, `@scope/name` of `@scope/name/x`; null for a built-in module. */
export function packageOf(specifier: string): string | null {
  if (specifier.startsWith('node:') || BUILTINS.has(specifier.split('/')[0])) return null;
  const parts = specifier.split('/');
  return specifier.startsWith('@') ? `${parts[0]}/${parts[1]}` : parts[0];
}

/** The pool threads' entry modules, loaded by file name beside the calling module. */
const POOL_MODULE = /compiledModulePath\(import\.meta\.url,\s*['"]([^'"]+)['"]\)/g;

/** Walks the compiled modules from `entry` (a path below `root`); `npx tsc -p .` must have run. */
export function runtimeImports(root: string, entry: string): RuntimeImports {
  const files = new Set<string>();
  const packages = new Map<string, string>();
  const queue = [resolve(root, entry)];
  while (queue.length > 0) {
    const file = queue.pop()!;
    const name = relative(root, file);
    if (files.has(name)) continue;
    files.add(name);
    const text = readFileSync(file, 'utf8');
    const specifiers = ts.preProcessFile(text, true, true).importedFiles.map((f) => f.fileName);
    for (const match of text.matchAll(POOL_MODULE)) specifiers.push(`./${match[1]}`);
    for (const specifier of specifiers) {
      if (specifier.startsWith('.')) {
        queue.push(resolve(dirname(file), specifier));
        continue;
      }
      const pkg = packageOf(specifier);
      if (pkg !== null && !packages.has(pkg)) packages.set(pkg, name);
    }
  }
  return { files: [...files].sort(), packages };
}
