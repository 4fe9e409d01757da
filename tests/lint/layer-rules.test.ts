// The layer rules of DEVELOPERS.md as eslint.config.js enforces them (`npm run lint`): each rule
// fails on a deliberate violation, linted through ESLint's Node API as text with a file path
// inside the layer (nothing is written to disk), and lets the allowed imports pass.
import { readFileSync } from "node:fs";
import path from "node:path";
import { pathToFileURL } from "node:url";
import { ESLint, type Linter } from "eslint";
import { describe, expect, it } from "vitest";

const root = path.resolve(import.meta.dirname, "../..");
// the layer rules alone (the cycle check walks the whole import graph: its own tests below)
const eslint = new ESLint({ cwd: root, overrideConfig: { rules: { "import-x/no-cycle": "off" } } });
const cycleCheck = new ESLint({ cwd: root, overrideConfig: { rules: { "import-x/no-cycle": "error" } } });

/** eslint.config.js's list of the cycles that exist today: per file, the imports that close them. */
interface KnownCycle {
  reason: string;
  imports: Record<string, string[]>;
}
const configModule = pathToFileURL(path.join(root, "eslint.config.js")).href;
const { KNOWN_CYCLES, COMPONENTS_IMPORTING_SERVER_TYPES } = (await import(configModule)) as {
  KNOWN_CYCLES: KnownCycle[];
  COMPONENTS_IMPORTING_SERVER_TYPES: Record<string, string[]>;
};

/** The rule ids ESLint reports for `code` as if it were the file at `file` (relative to the root). */
async function ruleIds(file: string, code: string): Promise<(string | null)[]> {
  const [result] = await eslint.lintText(code, { filePath: path.join(root, file) });
  return result.messages.map((m) => m.ruleId);
}

describe("the engine imports nothing outside app/engine", () => {
  const file = "app/engine/lint-fixture.ts";

  it("refuses a server module, a component, the dataset readers and other packages", async () => {
    for (const source of [
      "~/.server/db/index.server",
      "~/components/status",
      "../engine-io/read-csv",
      "~/engine-io/read-csv",
      "react",
      "drizzle-orm",
    ]) {
      expect(await ruleIds(file, `import * as m from "${source}";\nexport const x = m;\n`), source).toEqual([
        "import-x/no-restricted-paths",
      ]);
    }
  });

  it("refuses Node built-ins: the engine does no I/O", async () => {
    for (const source of ["node:fs", "fs", "node:crypto", "path"]) {
      expect(await ruleIds(file, `import * as m from "${source}";\nexport const x = m;\n`), source).toContain(
        "no-restricted-imports",
      );
    }
  });

  it("refuses a type-only import across the boundary too", async () => {
    expect(
      await ruleIds(
        file,
        `import type { Redaction } from "~/.server/redaction.server";\nexport type R = Redaction;\n`,
      ),
    ).toEqual(["import-x/no-restricted-paths"]);
  });

  it("allows its own modules and the packages it uses today", async () => {
    const code = [
      `import { tQuantile } from "./distributions";`,
      `import type { CheckKey } from "~/engine/checks";`,
      `import { z } from "zod";`,
      `import { jStat } from "jstat";`,
      `import betainc from "@stdlib/math-base-special-betainc";`,
      `export const used = [tQuantile, z, jStat, betainc];`,
      `export type K = CheckKey;`,
      "",
    ].join("\n");
    expect(await ruleIds(file, code)).toEqual([]);
    expect(
      await ruleIds(
        "app/engine/survival/lint-fixture.ts",
        `import { EngineError } from "../errors";\nexport const e = EngineError;\n`,
      ),
    ).toEqual([]);
  });
});

describe("the dataset readers import only the engine of the app", () => {
  it("refuses the server and components, allows the engine, Node and packages", async () => {
    const file = "app/engine-io/lint-fixture.ts";
    for (const source of ["~/.server/db/index.server", "~/components/status", "../routes/study-rerun"]) {
      expect(await ruleIds(file, `import * as m from "${source}";\nexport const x = m;\n`), source).toEqual([
        "import-x/no-restricted-paths",
      ]);
    }
    const code = `import { readFile } from "node:fs/promises";\nimport { parse } from "csv-parse/sync";\nimport { toDataTable } from "~/engine/data";\nexport const used = [readFile, parse, toDataTable];\n`;
    expect(await ruleIds(file, code)).toEqual([]);
  });
});

describe("components import no .server module", () => {
  it("refuses app/.server and any *.server file, type-only imports included", async () => {
    for (const source of [
      "~/.server/datasets/column-summary",
      "~/.server/permissions.server",
      "~/entry.server",
    ]) {
      expect(
        await ruleIds(
          "app/components/lint-fixture.tsx",
          `import type * as m from "${source}";\nexport type M = typeof m;\n`,
        ),
        source,
      ).toEqual(["import-x/no-restricted-paths"]);
    }
  });

  it("allows shared code, the engine's types and packages", async () => {
    const code = `import { fmt } from "~/shared/format";\nimport type { CheckOutcome } from "~/engine/checks";\nexport const f = fmt;\nexport type C = CheckOutcome;\n`;
    expect(await ruleIds("app/components/lint-fixture.tsx", code)).toEqual([]);
  });

  it("holds the dataset components that imported server types to the full rule (issue 19 item 3)", async () => {
    expect(COMPONENTS_IMPORTING_SERVER_TYPES).toEqual({});
    const file = "app/components/datasets/column-summaries.tsx";
    expect(
      await ruleIds(
        file,
        `import type { ColumnMeta } from "~/.server/datasets/column-summary";\nexport type C = ColumnMeta;\n`,
      ),
    ).toEqual(["import-x/no-restricted-paths"]);
    expect(
      await ruleIds(
        file,
        `import type { ColumnMeta } from "~/shared/datasets";\nexport type C = ColumnMeta;\n`,
      ),
    ).toEqual([]);
  });
});

describe("app/shared imports of the app only itself and the engine", () => {
  it("refuses a server module, a component and a route", async () => {
    for (const source of ["~/.server/db/index.server", "~/components/caution", "~/routes/study-rerun"]) {
      expect(
        await ruleIds("app/shared/lint-fixture.ts", `import * as m from "${source}";\nexport const x = m;\n`),
        source,
      ).toEqual(["import-x/no-restricted-paths"]);
    }
  });

  it("allows the engine's types and its own files", async () => {
    const code = `import { fmt } from "~/shared/format";\nimport type { CheckOutcome } from "~/engine/checks";\nexport const f = fmt;\nexport type C = CheckOutcome;\n`;
    expect(await ruleIds("app/shared/lint-fixture.ts", code)).toEqual([]);
  });
});

describe(".server modules import no route", () => {
  it("refuses a route module and the route table, from app/.server and from a *.server file", async () => {
    for (const file of [
      "app/.server/lint-fixture.ts",
      "app/.server/reruns/lint-fixture.server.ts",
      "app/lint-fixture.server.ts",
    ]) {
      for (const source of ["~/routes/study-rerun", "~/routes"]) {
        expect(
          await ruleIds(file, `import * as m from "${source}";\nexport const x = m;\n`),
          `${file} ${source}`,
        ).toEqual(["import-x/no-restricted-paths"]);
      }
    }
  });

  it("allows other server modules and the engine", async () => {
    const code = `import { db } from "~/.server/db/index.server";\nimport { fitModel } from "~/engine";\nexport const used = [db, fitModel];\n`;
    expect(await ruleIds("app/.server/lint-fixture.ts", code)).toEqual([]);
  });
});

describe("import cycles", () => {
  it("refuses a new cycle", async () => {
    // linear-model.ts imports distributions.ts: distributions importing it back closes a cycle
    const code = `import { fitLinearModel } from "./linear-model";\nexport const f = fitLinearModel;\n`;
    const [result] = await cycleCheck.lintText(code, {
      filePath: path.join(root, "app/engine/distributions.ts"),
    });
    expect(result.messages.map((m) => m.ruleId)).toEqual(["import-x/no-cycle"]);
  });

  it("finds exactly the known cycles' imports in the files that list them, and nothing else", async () => {
    const recorded: Record<string, string[]> = {};
    const found: Record<string, string[]> = {};
    for (const { imports } of KNOWN_CYCLES) {
      for (const [file, sources] of Object.entries(imports)) {
        recorded[file] = [...(recorded[file] ?? []), ...sources].sort();
        const [result] = await cycleCheck.lintFiles([path.join(root, file)]);
        const lines = readFileSync(path.join(root, file), "utf8").split("\n");
        found[file] = result.messages
          .filter((m: Linter.LintMessage) => m.ruleId === "import-x/no-cycle")
          .map(
            (m: Linter.LintMessage) =>
              /(?:from |import\()"([^"]+)"/.exec(lines[m.line - 1])?.[1] ?? `line ${m.line}`,
          )
          .sort();
      }
    }
    expect(found).toEqual(recorded);
  }, 120_000); // walks the server's whole import graph once per listed file
});
