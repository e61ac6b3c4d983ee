import { fileURLToPath } from 'node:url'
import { defineConfig } from 'vitest/config'

// Stand-alone config for the engine tests; the root config runs the same files in its
// 'unit' project (plain node environment, relative imports only).
export default defineConfig({
  root: fileURLToPath(new URL('../../..', import.meta.url)),
  test: {
    include: ['tests/unit/engine/**/*.test.ts'],
    environment: 'node',
    testTimeout: 120_000,
    hookTimeout: 120_000
  }
})
