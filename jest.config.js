// One jest run covers every suite; each project keeps its own module system
// (the server stack is ESM-only, the Angular preset is CommonJS).
import { createDefaultEsmPreset } from 'ts-jest';

const esm = createDefaultEsmPreset({ tsconfig: '<rootDir>/tsconfig.server.json' });
const nodeProject = (displayName, roots, testMatch) => ({
  displayName,
  testEnvironment: 'node',
  roots,
  testMatch,
  ...esm,
  moduleNameMapper: { '^(\\.{1,2}/.*)\\.js$': '$1' },
});

export default {
  testTimeout: 60000,
  projects: [
    nodeProject('engine', ['<rootDir>/shared'], ['**/*.spec.ts']),
    nodeProject('server', ['<rootDir>/server', '<rootDir>/test'], ['**/*.test.ts']),
    '<rootDir>/jest.web.config.cjs',
    { ...nodeProject('e2e', ['<rootDir>/test/e2e'], ['**/*.e2e.ts']) },
  ],
};
