/**
 * Headless command.
 *
 *   npm run --silent cli -- fit --data FILE --model MODEL.json [--means equal|proportional]
 *
 * The model's `population` conditions select the rows first (app/engine/population.ts, as a
 * rerun does); `--means` overrides the model's `means`.
 *   npm run --silent cli -- inspect --data FILE
 *
 * FILE is CSV (.csv), CDISC Dataset-JSON v1.1 (.json, .ndjson) or XPORT version 5 (.xpt), read
 * and typed by the same readers as the web upload. `fit` prints one JSON result; `inspect`
 * prints one JSON object describing the file (format, rows, columns with label and type, key,
 * problems). Both exit 0; on bad input they print one line starting with "error:" on stderr
 * and exit 2. A model with a `"repeated"` key is a repeated-measures model (MMRM), one with
 * `"family": "cox"` a time-to-event model; any other is linear or generalized linear.
 */
import { readFileSync } from "node:fs";
import { limitsFromEnv } from "./engine-io/dataset/limits";
import {
  firstBytesOf,
  formatOf,
  readDatasetFile,
  type ReadTable,
  type ValueType,
} from "./engine-io/dataset/read";
import { findKey } from "./.server/datasets/keys";
import { EngineError, fitModel, parseModelSpec, stringifyResult, toCliResult } from "./engine";
import type { MeansWeighting } from "./engine";
import { selectPopulation } from "./engine/population";
import { isCoxSpec, parseCoxSpec } from "./engine/survival/cox-spec";
import { fitCoxModel } from "./engine/survival/cox-model";
import { toCoxCliResult } from "./engine/survival/cox-result";
import { checkReproduction } from "./engine/reproduction";
import { isRepeatedSpec } from "./engine/repeated/repeated-spec";
import { repeatedCliAnswer } from "./engine/repeated/repeated-result";

const USAGE =
  "usage: cli fit --data FILE --model MODEL.json [--means equal|proportional] | cli inspect --data FILE (FILE: .csv, .json, .ndjson or .xpt)";

class UsageError extends Error {}

type Args =
  | { command: "fit"; data: string; model: string; means: MeansWeighting | null }
  | { command: "inspect"; data: string };

function parseArgs(argv: string[]): Args {
  const [command, ...rest] = argv;
  if (command !== "fit" && command !== "inspect")
    throw new UsageError(command ? `unknown command "${command}"; ${USAGE}` : USAGE);
  const allowed = command === "fit" ? ["--data", "--model", "--means"] : ["--data"];
  const values: Record<string, string> = {};
  for (let i = 0; i < rest.length; i++) {
    const flag = rest[i];
    if (!allowed.includes(flag)) throw new UsageError(`unknown option "${flag}"; ${USAGE}`);
    const value = rest[i + 1];
    if (value === undefined) throw new UsageError(`option ${flag} needs a value; ${USAGE}`);
    values[flag.slice(2)] = value;
    i++;
  }
  if (!values.data) throw new UsageError(`missing --data; ${USAGE}`);
  if (command === "inspect") return { command, data: values.data };
  if (!values.model) throw new UsageError(`missing --model; ${USAGE}`);
  const means = values.means ?? null;
  if (means !== null && means !== "equal" && means !== "proportional")
    throw new UsageError(`--means must be "equal" or "proportional"`);
  return { command, data: values.data, model: values.model, means };
}

function readText(path: string, what: string): string {
  try {
    return readFileSync(path, "utf8");
  } catch {
    throw new EngineError(`cannot read the ${what} file "${path}"`);
  }
}

/** Reads a dataset file of any supported format; throws EngineError with the problems when it cannot. */
async function readData(path: string): Promise<ReadTable> {
  const name = path.split(/[\\/]/).pop() as string;
  let head: Buffer;
  try {
    head = await firstBytesOf(path);
  } catch {
    throw new EngineError(`cannot read the data file "${path}"`);
  }
  const outcome = await readDatasetFile(path, name, formatOf(name, head), {
    limits: limitsFromEnv(process.env),
  });
  if (!outcome.ok) throw new EngineError(outcome.problems.join(" "));
  return outcome.table;
}

interface Inspection {
  format: ReadTable["format"];
  rows: number;
  columns: { name: string; label: string | null; type: ValueType }[];
  key: string[];
  problems: { severity: "error" | "warning"; message: string }[];
}

function inspect(table: ReadTable, fileName: string): Inspection {
  const problems: Inspection["problems"] = table.columns.flatMap((c) =>
    (c.warnings ?? []).map((message) => ({ severity: "warning" as const, message })),
  );
  const key = findKey(
    fileName,
    table.names,
    table.cells,
    table.rowNumbers,
    table.declaredKey,
    table.declaredKey !== null,
  );
  if (!key.ok) problems.push(...key.problems.map((message) => ({ severity: "error" as const, message })));
  return {
    format: table.format,
    rows: table.rowNumbers.length,
    columns: table.columns.map((c) => ({ name: c.name, label: c.label, type: c.valueType })),
    key: key.ok ? key.columns : [],
    problems,
  };
}

async function main(): Promise<number> {
  try {
    const args = parseArgs(process.argv.slice(2));
    if (args.command === "inspect") {
      const table = await readData(args.data);
      process.stdout.write(JSON.stringify(inspect(table, args.data.split(/[\\/]/).pop() as string)) + "\n");
      return 0;
    }
    const modelText = readText(args.model, "model");
    let spec: unknown;
    try {
      spec = JSON.parse(modelText);
    } catch (err) {
      throw new EngineError(
        `the model file is not valid JSON: ${err instanceof Error ? err.message : String(err)}`,
      );
    }
    const table = await readData(args.data);
    const columns: Record<string, string[]> = {};
    table.names.forEach((name, j) => (columns[name] = table.cells[j]));
    if (isRepeatedSpec(spec)) {
      process.stdout.write(
        repeatedCliAnswer(
          spec,
          { columns, rowNumbers: table.rowNumbers },
          { meansWeighting: args.means ?? "equal" },
        ) + "\n",
      );
      return 0;
    }
    const parsed = isCoxSpec(spec) ? parseCoxSpec(spec) : parseModelSpec(spec);
    const population = selectPopulation({ columns, rowNumbers: table.rowNumbers }, parsed.population);
    const populationFacts = { excludedByPopulation: population.excluded, population: population.byCondition };
    if (parsed.family === "cox") {
      const answer = toCoxCliResult(fitCoxModel(parsed, population.table));
      process.stdout.write(stringifyResult({ ...answer, ...populationFacts }) + "\n");
      return 0;
    }
    const result = fitModel(parsed, population.table, args.means ? { meansWeighting: args.means } : {});
    // the model's "published" values, when given, are checked against the fit (reproduction.ts)
    const published = result.spec.published ?? [];
    process.stdout.write(
      stringifyResult({
        ...toCliResult(result),
        ...populationFacts,
        ...(published.length > 0 ? { reproduction: checkReproduction(result, published) } : {}),
      }) + "\n",
    );
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

process.exitCode = await main();
