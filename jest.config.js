// Four projects: unit (pure modules), api (supertest against the real PostgreSQL), client components (jest-expo web),
// and browser tests (playwright-core driving Debian's Chromium against the exported app).
const serverTransform = {
  '^.+\\.[tj]sx?$': [
    'babel-jest',
    {
      babelrc: false,
      configFile: false,
      presets: [['@babel/preset-typescript', { allowDeclareFields: true }]],
      plugins: ['@babel/plugin-transform-modules-commonjs'],
    },
  ],
};
// ESM-only packages the server imports (otplib's Base32 and hash plugins); jest runs CommonJS, so they are transformed.
const serverEsm = '/node_modules/(?!(canonicalize|@scure|@noble|@otplib)/)';
const esmPackages = ['@tanstack', 'react-native', '@react-native', 'expo', '@expo', 'expo-.*', '@expo-google-fonts', '@react-navigation', 'react-native-.*', 'canonicalize', 'standard-navigation'];

module.exports = {
  // Browser tests take seconds per step; a global limit is the only one jest honours.
  testTimeout: 120_000,
  projects: [
    {
      // Pure modules: no database, no network. `npx jest --selectProjects unit` runs them alone.
      displayName: 'unit',
      testEnvironment: 'node',
      roots: ['<rootDir>/tests/unit'],
      transform: serverTransform,
      transformIgnorePatterns: [serverEsm],
    },
    {
      displayName: 'api',
      testEnvironment: 'node',
      roots: ['<rootDir>/tests/api'],
      transform: serverTransform,
      transformIgnorePatterns: [serverEsm],
      globalSetup: '<rootDir>/tests/setup/global-setup.ts',
      globalTeardown: '<rootDir>/tests/setup/global-teardown.ts',
    },
    {
      displayName: 'client',
      preset: 'jest-expo/web',
      roots: ['<rootDir>/tests/components'],
      transformIgnorePatterns: [`/node_modules/(?!(${esmPackages.join('|')})/)`],
    },
    {
      displayName: 'browser',
      testEnvironment: 'node',
      roots: ['<rootDir>/tests/e2e'],
      transform: serverTransform,
      transformIgnorePatterns: [serverEsm],
      globalSetup: '<rootDir>/tests/setup/global-setup.ts',
      globalTeardown: '<rootDir>/tests/setup/global-teardown.ts',
    },
  ],
};
