/**
 * Headless rerun command.
 *
 *   npm run --silent cli -- fit --data FILE.csv --model MODEL.json [--means equal|proportional]
 *
 * Prints one JSON object on stdout and exits 0; on bad input prints one line starting with
 * "error:" on stderr and exits 2.
 */
import { readFileSync } from "node:fs";
import { readCsvText } from "./engine-io/read-csv";
import { EngineError, fitModel, stringifyResult, toCliResult } from "./engine";
import type { MeansWeighting } from "./engine";
import { isCoxSpec } from "./engine/survival/cox-spec";
import { coxCliAnswer } from "./engine/survival/cox-result";

const USAGE = "usage: cli fit --data FILE.csv --model MODEL.json [--means equal|proportional]";

class UsageError extends Error {}

function parseArgs(argv: string[]): { data: string; model: string; means: MeansWeighting } {
  const [command, ...rest] = argv;
  if (command !== "fit") throw new UsageError(command ? `unknown command "${command}"; ${USAGE}` : USAGE);
  const values: Record<string, string> = {};
  for (let i = 0; i < rest.length; i++) {
    const flag = rest[i];
    if (!["--data", "--model", "--means"].includes(flag)) throw new UsageError(`unknown option "${flag}"; ${USAGE}`);
    const value = rest[i + 1];
    if (value === undefined) throw new UsageError(`option ${flag} needs a value; ${USAGE}`);
    values[flag.slice(2)] = value;
    i++;
  }
  if (!values.data) throw new UsageError(`missing --data; ${USAGE}`);
  if (!values.model) throw new UsageError(`missing --model; ${USAGE}`);
  const means = values.means ?? "equal";
  if (means !== "equal" && means !== "proportional") throw new UsageError(`--means must be "equal" or "proportional"`);
  return { data: values.data, model: values.model, means };
}

function readText(path: string, what: string): string {
  try {
    return readFileSync(path, "utf8");
  } catch {
    throw new EngineError(`cannot read the ${what} file "${path}"`);
  }
}

function main(): number {
  try {
    const args = parseArgs(process.argv.slice(2));
    const modelText = readText(args.model, "model");
    let spec: unknown;
    try {
      spec = JSON.parse(modelText);
    } catch (err) {
      throw new EngineError(`the model file is not valid JSON: ${err instanceof Error ? err.message : String(err)}`);
    }
    const table = readCsvText(readText(args.data, "data"));
    if (isCoxSpec(spec)) {
      process.stdout.write(coxCliAnswer(spec, table) + "\n");
      return 0;
    }
    const result = fitModel(spec, table, { meansWeighting: args.means });
    process.stdout.write(stringifyResult(toCliResult(result)) + "\n");
    return 0;
  } catch (err) {
    if (err instanceof EngineError || err instanceof UsageError) {
      process.stderr.write(`error: ${err.message.replace(/\s*\n\s*/g, " ")}\n`);
      return 2;
    }
    const message = err instanceof Error ? err.message : String(err);
    process.stderr.write(`error: internal failure: ${message.replace(/\s*\n\s*/g, " ")}\n`);
    return 1;
  }
}

process.exitCode = main();
