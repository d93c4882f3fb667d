import { defineConfig } from 'vitest/config';
import react from '@vitejs/plugin-react';
import tailwindcss from '@tailwindcss/vite';

// One config for the client build and for every test project, so aliases and plugins never drift apart.
export default defineConfig({
  plugins: [react(), tailwindcss()],
  publicDir: false,
  build: {
    outDir: 'dist',
    emptyOutDir: true,
    sourcemap: false,
    chunkSizeWarningLimit: 900,
  },
  server: {
    host: '127.0.0.1',
    port: 5173,
    proxy: { '/api': 'http://127.0.0.1:8420' },
  },
  test: {
    // Projects split by what they need: pure code, a DOM, a database, a real browser. They run one
    // group after another (groupOrder), so a two-core machine is never asked to run all four at once.
    projects: [
      {
        extends: true,
        test: {
          name: 'unit',
          sequence: { groupOrder: 0 },
          include: ['tests/unit/**/*.test.ts', 'tests/reference/**/*.test.ts'],
          environment: 'node',
          testTimeout: 120_000,
        },
      },
      {
        extends: true,
        test: {
          name: 'api',
          sequence: { groupOrder: 2 },
          include: ['tests/api/**/*.test.ts', 'tests/migrations/**/*.test.ts'],
          environment: 'node',
          testTimeout: 120_000,
          hookTimeout: 120_000,
          // Each file makes its own database; two at a time fits a two-core machine.
          maxWorkers: 2,
        },
      },
      {
        extends: true,
        test: {
          name: 'client',
          sequence: { groupOrder: 1 },
          include: ['tests/client/**/*.test.{ts,tsx}'],
          environment: 'jsdom',
          testTimeout: 30_000,
        },
      },
      {
        extends: true,
        test: {
          name: 'browser',
          sequence: { groupOrder: 3 },
          include: ['tests/browser/**/*.test.ts'],
          environment: 'node',
          testTimeout: 180_000,
          hookTimeout: 180_000,
          fileParallelism: false,
          // A page waits on the server and its own chunks; on a busy two-core machine one second (the
          // default) is too short for a round trip, so polled expectations get longer before failing.
          expect: { poll: { timeout: 20_000, interval: 100 } },
        },
      },
    ],
  },
});
