import { defineConfig } from "vitest/config";

// Tests run without the React Router plugin: engine, server and route-module tests import
// modules directly; browser tests drive the built app in Chromium.
export default defineConfig({
  resolve: { tsconfigPaths: true },
  test: {
    include: ["tests/**/*.test.ts"],
    testTimeout: 30_000,
    hookTimeout: 120_000,
    fileParallelism: true,
    pool: "forks",
  },
});
