/**
 * An appendix export that cannot be stored is a clear refusal and never takes the process
 * down: with a file where the appendices folder should be, and with a full disk (the kernel's
 * file-size limit on a child process, smaller than the appendix), the export is refused with
 * the reason, no record and no file (not even a partial one) is left, and the refusal is in
 * the audit trail.
 */
import { spawnSync } from "node:child_process";
import { existsSync, readdirSync, rmSync, writeFileSync } from "node:fs";
import path from "node:path";
import { beforeAll, describe, expect, it } from "vitest";
import { useTempDatabase } from "../support/temp-db";
import { makeSignedRerun, type SignedRerun } from "../support/signed-rerun";

const { dir, dbFile } = useTempDatabase();
const { dbClient } = await import("~/.server/db/index.server");
const { exportAppendix, renderAppendix, AppendixRefused } =
  await import("~/.server/appendix/appendix.server");

const appendices = path.join(dir, "data", "appendices");
const filesUnder = (base: string): string[] =>
  existsSync(base)
    ? readdirSync(base, { recursive: true, withFileTypes: true })
        .filter((e) => e.isFile())
        .map((e) => e.name)
    : [];
const count = async (sql: string) => Number((await dbClient.execute(sql)).rows[0].n);

let s: SignedRerun;
beforeAll(async () => {
  s = await makeSignedRerun();
}, 120_000);

describe("an appendix export that cannot be stored", () => {
  it("is refused with the reason when the appendices folder is a file, leaving no record", async () => {
    rmSync(appendices, { recursive: true, force: true });
    writeFileSync(appendices, "not a folder");
    try {
      const err = await exportAppendix(s.people.helen, s.studyId, {
        kind: "rerun",
        rerunId: s.rerunId,
      }).catch((e: unknown) => e);
      expect(err).toBeInstanceOf(AppendixRefused);
      expect((err as InstanceType<typeof AppendixRefused>).status).toBe(507);
      expect((err as Error).message).toMatch(
        /^The appendix could not be stored: a folder inside the data folder is missing or is not a folder \(E[A-Z]+\)\. Nothing was stored\./,
      );
      expect(await count("SELECT count(*) AS n FROM appendices")).toBe(0);
      expect(
        await count("SELECT count(*) AS n FROM audit_events WHERE action = 'appendix.export_refused'"),
      ).toBe(1);
    } finally {
      rmSync(appendices, { force: true });
    }
  });

  it("survives a full disk: refused, no record, no partial file, and the process lives on", async () => {
    const { bytes } = await renderAppendix(s.studyId, { kind: "rerun", rerunId: s.rerunId });
    const limit = Math.floor(bytes.length / 2);
    expect(limit).toBeGreaterThan(64 * 1024);
    // The child's own database writes start from an empty write-ahead log, well under the limit.
    await dbClient.execute("PRAGMA wal_checkpoint(TRUNCATE)");
    const child = spawnSync(
      "prlimit",
      [`--fsize=${limit}`, process.execPath, "--import", "tsx", "tests/unit/appendix-full-disk-child.ts"],
      {
        env: {
          ...process.env,
          DATABASE_URL: `file:${dbFile}`,
          ACTOR: JSON.stringify(s.people.helen),
          STUDY_ID: s.studyId,
          RERUN_ID: s.rerunId,
        },
        encoding: "utf8",
        timeout: 90_000,
      },
    );
    expect(child.stderr).not.toMatch(/Unhandled|uncaught/i);
    expect(child.status).toBe(0);
    const report = JSON.parse(child.stdout.trim().split("\n").pop() as string) as {
      status: number;
      message: string;
      alive: boolean;
    };
    expect(report.status).toBe(507);
    expect(report.message).toMatch(
      /^The appendix could not be stored: the data folder is full \(EFBIG\)\. Nothing was stored\./,
    );
    expect(report.alive).toBe(true);
    expect(filesUnder(appendices)).toEqual([]);
    expect(await count("SELECT count(*) AS n FROM appendices")).toBe(0);
    expect(
      await count("SELECT count(*) AS n FROM audit_events WHERE action = 'appendix.export_refused'"),
    ).toBe(2);
  }, 120_000);

  it("is stored as before when the disk has room", async () => {
    const row = await exportAppendix(s.people.helen, s.studyId, { kind: "rerun", rerunId: s.rerunId });
    expect(filesUnder(appendices)).toEqual([`${row.sha256}.docx`]);
    expect(await count("SELECT count(*) AS n FROM appendices")).toBe(1);
  });
});
