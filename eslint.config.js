// Lint for roundwire: typescript-eslint's recommended rules, no import cycles, and imports that
// point down the layers that DEVELOPERS.md draws. The layer table below is the one definition of
// that direction; test/repository/lint-layers.test.ts shows that a wrong import fails.

import tseslint from 'typescript-eslint';
import importX from 'eslint-plugin-import-x';
import { createTypeScriptImportResolver } from 'eslint-import-resolver-typescript';

/**
 * Lowest first. A folder may import its own layer's folders and every lower layer, never a higher
 * one. Folders on one line are siblings and may not import each other unless `siblingsMay` says so.
 */
export const LAYERS = [
  ['src/base'],
  ['src/vec', 'src/scenario'],
  ['src/linalg'],
  ['src/problem'],
  ['src/data', 'src/algorithm', 'src/compress', 'src/timing'],
  ['src/theory', 'src/protocol'],
  ['src/engine'],
  ['src/results'],
  ['src/report', 'runtime'],
  ['server', 'client'],
  ['src/commands'],
  ['src/cli.ts'],
];

/** Sibling imports that are part of the design (importer -> imported). */
const SIBLINGS_MAY = [['src/scenario', 'src/vec']];

function zones() {
  const out = [];
  LAYERS.forEach((layer, level) => {
    const higher = LAYERS.slice(level + 1).flat();
    for (const target of layer) {
      const siblings = layer.filter(
        (f) => f !== target && !SIBLINGS_MAY.some(([a, b]) => a === target && b === f),
      );
      const from = [...higher, ...siblings];
      if (from.length === 0) continue;
      out.push({
        target: `./${target}`,
        from: from.map((f) => `./${f}`),
        message: `${target} sits below these in the layers (eslint.config.js, DEVELOPERS.md)`,
      });
    }
  });
  return out;
}

export default tseslint.config(
  { ignores: ['dist/**', 'node_modules/**', 'results/**', 'bin/**', '*.config.js', '*.config.ts'] },
  ...tseslint.configs.recommended,
  {
    files: ['src/**/*.ts', 'server/**/*.ts', 'client/**/*.ts', 'runtime/**/*.ts', 'test/**/*.ts'],
    plugins: { 'import-x': importX },
    settings: {
      // no-cycle parses the modules an import leads to: it must know TypeScript files and their parser.
      'import-x/extensions': ['.ts', '.js'],
      'import-x/parsers': { '@typescript-eslint/parser': ['.ts'] },
      'import-x/resolver-next': [createTypeScriptImportResolver({ project: './tsconfig.json' })],
    },
    rules: {
      'import-x/no-cycle': ['error', { ignoreExternal: true }],
      'import-x/no-restricted-paths': ['error', { zones: zones() }],
      '@typescript-eslint/no-unused-vars': [
        'error',
        { argsIgnorePattern: '^_', varsIgnorePattern: '^_' },
      ],
    },
  },
  {
    // Tests may reach into any layer, but the core never imports a test.
    files: ['test/**/*.ts'],
    rules: { 'import-x/no-restricted-paths': 'off' },
  },
);
