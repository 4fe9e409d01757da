/**
 * Writes the demo study's subject-level dataset (adeff.csv) to the path given as argument.
 * Usage: tsx scripts/write-demo-data.ts data/demo/adeff.csv [seed]
 */
import { mkdirSync, writeFileSync } from "node:fs";
import { dirname } from "node:path";
import { demoDatasetCsv, DEMO_DEFAULT_SEED } from "../app/.server/demo/demo-dataset";

const [target, seedArg] = process.argv.slice(2);
if (!target) {
  console.error("Give the output file, e.g.: tsx scripts/write-demo-data.ts data/demo/adeff.csv");
  process.exit(2);
}
const seed = seedArg === undefined ? DEMO_DEFAULT_SEED : Number(seedArg);
if (!Number.isInteger(seed)) {
  console.error(`Seed must be an integer, got "${seedArg}".`);
  process.exit(2);
}
mkdirSync(dirname(target), { recursive: true });
writeFileSync(target, demoDatasetCsv(seed), "utf8");
console.log(`Wrote ${target} (seed ${seed}).`);
