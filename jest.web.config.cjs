const { createCjsPreset } = require('jest-preset-angular/presets');

module.exports = {
  displayName: 'web',
  ...createCjsPreset({ tsconfig: '<rootDir>/tsconfig.spec.json' }),
  roots: ['<rootDir>/src'],
  setupFilesAfterEnv: ['<rootDir>/src/setup-jest.ts'],
  moduleNameMapper: {
    '^@shared/(.*?)(\\.js)?$': '<rootDir>/shared/$1',
    '^(\\.{1,2}/.*)\\.js$': '$1',
  },
};
