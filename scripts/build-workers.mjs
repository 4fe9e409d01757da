/**
 * Builds the compute threads' entry (app/.server/compute/compute-worker.ts) into
 * build/server/compute-worker.js, beside the server build that starts them (pool.server.ts looks
 * for it there). Packages stay imports of node_modules, as in the server build. Part of
 * `npm run build`, after `react-router build` (which empties build/server).
 */
import { build } from "esbuild";

await build({
  entryPoints: ["app/.server/compute/compute-worker.ts"],
  outfile: "build/server/compute-worker.js",
  bundle: true,
  platform: "node",
  format: "esm",
  target: "node20",
  packages: "external",
  tsconfig: "tsconfig.json",
  logLevel: "warning",
});
