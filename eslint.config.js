// Lint, including the import boundaries that keep the architecture honest:
// shared/ imports only zod; src/ never imports server/; only repositories touch Drizzle.
import eslint from '@eslint/js';
import angular from 'angular-eslint';
import tseslint from 'typescript-eslint';

const outsideShared = {
  regex: '^(?!zod$|\\.{1,2}/)',
  message: 'shared/ is pure: it may import zod and other shared/ files only.',
};
const upToOtherLayers = (layers, message) => ({ regex: `^(\\.\\./)+(${layers.join('|')})(/|$)`, message });

export default tseslint.config(
  { ignores: ['dist/**', 'node_modules/**', '.angular/**', 'data/**', 'test-output/**', 'drizzle/**', 'coverage/**'] },
  {
    files: ['**/*.ts'],
    extends: [eslint.configs.recommended, ...tseslint.configs.recommended],
    rules: {
      '@typescript-eslint/no-unused-vars': ['error', { argsIgnorePattern: '^_', varsIgnorePattern: '^_' }],
      '@typescript-eslint/no-non-null-assertion': 'off',
    },
  },
  {
    files: ['shared/**/*.ts'],
    rules: {
      'no-restricted-imports': [
        'error',
        { patterns: [outsideShared, upToOtherLayers(['server', 'src', 'test', 'storage-fake'], outsideShared.message)] },
      ],
    },
  },
  {
    // Unit specs beside the engine may also import the test runner and read fixture files.
    files: ['shared/**/*.spec.ts'],
    rules: {
      'no-restricted-imports': [
        'error',
        {
          patterns: [
            { ...outsideShared, regex: '^(?!zod$|@jest/globals$|node:(fs|path|url)$|\\.{1,2}/)' },
            upToOtherLayers(['server', 'src', 'test', 'storage-fake'], outsideShared.message),
          ],
        },
      ],
    },
  },
  {
    files: ['src/**/*.ts'],
    extends: [...angular.configs.tsRecommended],
    processor: angular.processInlineTemplates,
    rules: {
      'no-restricted-imports': [
        'error',
        {
          paths: ['express', 'drizzle-orm', 'better-sqlite3', 'zod/v3'].map((name) => ({
            name,
            message: 'The web client talks to the server over HTTP only.',
          })),
          patterns: [upToOtherLayers(['server', 'storage-fake', 'drizzle'], 'src/ must not import server code.')],
        },
      ],
    },
  },
  {
    files: ['src/**/*.html'],
    extends: [...angular.configs.templateRecommended, ...angular.configs.templateAccessibility],
  },
  {
    // Drizzle belongs to repositories and the db layer; the demo seed is a fixture loader of the db layer.
    files: ['server/**/*.ts'],
    ignores: ['server/**/*-repository.ts', 'server/db/**', 'server/seed/**'],
    rules: {
      'no-restricted-imports': [
        'error',
        {
          patterns: [
            { regex: '^drizzle-orm', message: 'Only repositories (*-repository.ts) and server/db touch Drizzle.' },
            { regex: '(^|/)db/schema(\\.js)?$', message: 'Only repositories read the Drizzle schema.' },
          ],
        },
      ],
    },
  },
);
