/**
 * A failed upload leaves nothing behind, even when the process doing the work is killed
 * half-way (SIGKILL, no chance to clean up): no dataset, no version, no stored file. The only
 * trace is the work file in the temporary folder, which the next upload's sweep removes.
 */
import { spawn } from "node:child_process";
import { existsSync, readdirSync } from "node:fs";
import path from "node:path";
import { describe, expect, it } from "vitest";
import { useTempDatabase } from "../support/temp-db";

const { dir } = useTempDatabase();
const { dbClient } = await import("~/.server/db/index.server");
const { sweepLeftovers } = await import("~/.server/datasets/datasets.server");

const files = (sub: string): string[] => {
  const base = path.join(dir, "data", "datasets", sub);
  if (!existsSync(base)) return [];
  return readdirSync(base, { recursive: true, withFileTypes: true })
    .filter((e) => e.isFile())
    .map((e) => e.name);
};

describe("killing an upload half-way", () => {
  it("leaves no dataset, version or stored file, and the sweep removes the work file", async () => {
    const child = spawn(process.execPath, ["--import", "tsx", "tests/datasets/kill-child.ts"], {
      env: { ...process.env, ROWS: "80000" },
      stdio: ["ignore", "pipe", "pipe"],
    });
    let out = "";
    let err = "";
    child.stderr.on("data", (d: Buffer) => (err += d.toString()));
    const killedAt = await new Promise<string>((resolve, reject) => {
      child.stdout.on("data", (d: Buffer) => {
        out += d.toString();
        const m = /parse ([3-9])\n/.exec(out);
        if (m) {
          child.kill("SIGKILL");
          resolve(m[0].trim());
        }
      });
      child.on("exit", () => reject(new Error(`the child ended before it could be killed: ${out} ${err}`)));
    });
    await new Promise((r) => child.once("exit", r));
    expect(killedAt).toMatch(/^parse [3-9]$/);
    expect(out).not.toContain("finished");

    const count = async (table: string) =>
      Number((await dbClient.execute(`SELECT count(*) AS n FROM ${table}`)).rows[0].n);
    expect(await count("datasets")).toBe(0);
    expect(await count("dataset_versions")).toBe(0);
    expect(await count("identifier_screen_hits")).toBe(0);
    expect(files("blobs")).toEqual([]);
    expect(files("columns")).toEqual([]);
    expect(files("tmp")).toHaveLength(1);

    const removed = await sweepLeftovers();
    expect(removed).toHaveLength(1);
    expect(files("tmp")).toEqual([]);
  }, 60_000);
});
