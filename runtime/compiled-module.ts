// Pool threads load a compiled .js file by name. From dist/ the file sits beside its caller;
// when the caller runs from TypeScript source (vitest), the compiled twin under dist/ is used,
// so `npx tsc -p .` must have run first.

import { existsSync } from 'node:fs';
import { fileURLToPath } from 'node:url';

/** The path of the compiled module `name` in the caller's folder (callerUrl: import.meta.url). */
export function compiledModulePath(callerUrl: string, name: string): string {
  const beside = fileURLToPath(new URL(`./${name}`, callerUrl));
  if (existsSync(beside)) return beside;
  const folder = new URL('.', callerUrl);
  const root = new URL('../', folder);
  const folderName = folder.pathname.split('/').filter(Boolean).pop() ?? '';
  return fileURLToPath(new URL(`dist/${folderName}/${name}`, root));
}
