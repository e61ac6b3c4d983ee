import { fileURLToPath } from 'node:url'
import { defineConfig } from 'vitest/config'

const alias = {
  '#shared': fileURLToPath(new URL('./shared', import.meta.url))
}

// Three tiers, run by `npm test` after it has started MariaDB, the mail catcher and the built server.
export default defineConfig({
  resolve: { alias },
  test: {
    projects: [
      {
        resolve: { alias },
        test: { name: 'unit', include: ['tests/unit/**/*.test.ts'], environment: 'node', sequence: { groupOrder: 0 } }
      },
      {
        resolve: { alias },
        test: {
          name: 'integration',
          include: ['tests/integration/**/*.test.ts'],
          // Integration tests lock demo e-mails on purpose (sign-in limits); browser tests run after them, not alongside.
          sequence: { groupOrder: 1 },
          environment: 'node',
          testTimeout: 30_000,
          // One server and one database: files run one after another so counts and limits stay predictable.
          fileParallelism: false
        }
      },
      {
        resolve: { alias },
        test: {
          name: 'e2e',
          include: ['tests/e2e/**/*.test.ts'],
          sequence: { groupOrder: 2 },
          environment: 'node',
          // Generous: a browser test waits on builds of pages, fits and service workers on a 2-core machine.
          testTimeout: 120_000,
          hookTimeout: 60_000,
          // A page on a loaded 2-core machine can take seconds to hydrate and refetch; a 1 s poll fails on load, not on bugs.
          expect: { poll: { timeout: 15_000, interval: 100 } },
          fileParallelism: false
        }
      }
    ]
  }
})
