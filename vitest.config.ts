import { defineConfig } from "vitest/config";

// Two projects: "unit" imports modules directly (engine, services with their own temporary
// databases); "app" runs against the built server and the fake identity provider, started
// once by tests/support/global-setup.ts (build first: `npm run build`).
export default defineConfig({
  resolve: { tsconfigPaths: true },
  test: {
    testTimeout: 30_000,
    hookTimeout: 120_000,
    pool: "forks",
    projects: [
      {
        extends: true,
        test: {
          name: "unit",
          include: ["tests/**/*.test.ts"],
          exclude: ["tests/app/**", "tests/browser/**", "**/node_modules/**"],
        },
      },
      {
        extends: true,
        test: {
          name: "app",
          include: ["tests/app/**/*.test.ts", "tests/browser/**/*.test.ts"],
          globalSetup: ["tests/support/global-setup.ts"],
          // The app project shares one server and database: run its files one at a time.
          fileParallelism: false,
        },
      },
    ],
  },
});
