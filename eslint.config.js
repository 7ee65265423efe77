// Flat config: the recommended JavaScript and TypeScript rules, plus one
// architectural rule: the engine stays pure (no server framework, database or
// schema library inside server/engine/; of packages, only ml-matrix).
import js from '@eslint/js';
import tseslint from 'typescript-eslint';

export default tseslint.config(
  { ignores: ['node_modules/', 'data/', 'coverage/', 'dist/'] },
  js.configs.recommended,
  ...tseslint.configs.recommended,
  {
    files: ['bin/**/*.js'],
    languageOptions: { globals: { process: 'readonly', console: 'readonly' } },
  },
  {
    rules: {
      '@typescript-eslint/no-unused-vars': ['error', { argsIgnorePattern: '^_', varsIgnorePattern: '^_' }],
    },
  },
  {
    // every write transaction starts with BEGIN IMMEDIATE (DEVELOPERS.md, "Write rules"): writeTransaction(db, fn)
    files: ['server/**/*.ts'],
    ignores: ['server/store/db.ts'],
    rules: {
      'no-restricted-syntax': ['error', {
        selector: "CallExpression[callee.property.name='transaction'][callee.object.name='db']",
        message: 'db.transaction(fn)() starts deferred: use writeTransaction(db, fn) from server/store/db.ts (BEGIN IMMEDIATE).',
      }],
    },
  },
  {
    files: ['server/engine/**/*.ts'],
    rules: {
      'no-restricted-imports': ['error', {
        patterns: [
          { group: ['fastify', 'fastify-*', '@fastify/*'], message: 'server/engine/ is pure numerics: no web framework.' },
          { group: ['better-sqlite3'], message: 'server/engine/ is pure numerics: no database.' },
          { group: ['zod', 'zod/*'], message: 'server/engine/ is pure numerics: validate in server/schema/.' },
          { group: ['mathjs'], message: 'server/engine/ works in SI numbers: convert units in server/units/.' },
          // The only package the engine may import is ml-matrix (the general eigen solver, linalg/eigen.ts):
          // any other bare specifier is refused; tests/engine/purity.test.ts checks the same list.
          { regex: '^(?!ml-matrix$)(?![./])', message: 'server/engine/ imports only itself and ml-matrix (DEVELOPERS.md, dependencies).' },
        ],
      }],
    },
  },
);
