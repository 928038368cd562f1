import { fileURLToPath, URL } from 'node:url';
import { defineConfig } from 'vitest/config';
import vue from '@vitejs/plugin-vue';

const alias = {
  '@': fileURLToPath(new URL('./src', import.meta.url)),
  '@shared': fileURLToPath(new URL('./shared', import.meta.url)),
};

// The server and browser projects expect a MariaDB started by scripts/test.ts (npm test),
// which passes DB_* variables for the test instance.
export default defineConfig({
  resolve: { alias },
  test: {
    env: { TZ: 'UTC' },
    projects: [
      { resolve: { alias }, test: { name: 'shared', sequence: { groupOrder: 0 }, environment: 'node', include: ['tests/shared/**/*.test.ts', 'tests/simulator/**/*.test.ts'] } },
      {
        resolve: { alias },
        test: {
          name: 'server',
          // Projects of a later group start after the earlier group finished: the server tests stop
          // MariaDB for 30 s, which must not overlap the browser tests.
          sequence: { groupOrder: 1 },
          environment: 'node',
          include: ['tests/server/**/*.test.ts'],
          globalSetup: ['tests/server/globalSetup.ts'],
          pool: 'forks',
          fileParallelism: false,
          testTimeout: 30_000,
          hookTimeout: 60_000,
          env: { TZ: 'UTC' },
        },
      },
      { plugins: [vue()], resolve: { alias }, test: { name: 'client', sequence: { groupOrder: 0 }, environment: 'happy-dom', include: ['tests/client/**/*.test.ts'] } },
      {
        resolve: { alias },
        test: {
          name: 'browser',
          sequence: { groupOrder: 2 },
          environment: 'node',
          include: ['tests/browser/**/*.test.ts'],
          pool: 'forks',
          fileParallelism: false,
          testTimeout: 60_000,
          hookTimeout: 120_000,
          env: { TZ: 'UTC' },
        },
      },
    ],
  },
});
