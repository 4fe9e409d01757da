/**
 * Dataset benchmark: a generated 200 000-row x 25-column CSV (about 100 MB, invented values)
 * goes through the real upload path (multipart stream to disk, parse, checks, identifier
 * screen, store) into a fresh temporary database, then the first preview window is read.
 * Prints upload-to-preview time, parse rate, peak memory, and the time a fresh process takes
 * to load the locked version for a rerun.
 *
 *   npm run bench:datasets            (ROWS=50000 npm run bench:datasets for a quicker run)
 *
 * Targets (issue "Locked datasets"): upload-to-preview <= 15 s, peak RSS <= 1 GiB, load <= 1 s.
 */
import { spawnSync } from "node:child_process";
import { createReadStream, createWriteStream, mkdtempSync, rmSync, statSync } from "node:fs";
import os from "node:os";
import path from "node:path";
import { Readable } from "node:stream";
import { wideCsvLines } from "../tests/datasets/generate";

const loadOnly = process.argv.indexOf("--load");

if (loadOnly !== -1) {
  // Child mode: a fresh process loads the locked version, as a rerun worker would.
  const versionId = process.argv[loadOnly + 1];
  const { loadLockedTable } = await import("../app/.server/datasets/catalog.server");
  const t0 = performance.now();
  const locked = await loadLockedTable(versionId);
  const ms = performance.now() - t0;
  const n = locked.table.rowNumbers.length;
  process.stdout.write(
    JSON.stringify({ ms, rows: n, columns: Object.keys(locked.table.columns).length }) + "\n",
  );
  process.exit(0);
}

const rows = Number(process.env.ROWS ?? 200_000);
const dir = mkdtempSync(path.join(os.tmpdir(), "plumbline-bench-datasets-"));
process.env.DATABASE_URL = `file:${path.join(dir, "bench.db")}`;
process.env.DATA_DIR = path.join(dir, "data");
process.env.MIGRATIONS_DIR = path.resolve("drizzle");

let peak = 0;
const sampler = setInterval(() => (peak = Math.max(peak, process.memoryUsage().rss)), 25);

try {
  const csvPath = path.join(dir, "adbench.csv");
  const out = createWriteStream(csvPath);
  for (const line of wideCsvLines(rows))
    if (!out.write(line + "\n")) await new Promise<void>((r) => out.once("drain", () => r()));
  await new Promise<void>((r) => out.end(() => r()));
  const bytes = statSync(csvPath).size;
  const rssBefore = process.memoryUsage().rss;

  const { db, t } = await import("../app/.server/db/index.server");
  const { receiveUpload } = await import("../app/.server/datasets/upload.server");
  const svc = await import("../app/.server/datasets/datasets.server");
  await db.insert(t.people).values({
    id: "p-bench",
    email: "bench@plumbline.example",
    displayName: "Benchmark",
    externalId: "bench",
  });
  await db
    .insert(t.studies)
    .values({ id: "s-bench", code: "BENCH-1", title: "Benchmark study", sponsor: "Invented sponsor" });
  const actor = { id: "p-bench", name: "Benchmark" };

  // The multipart request a browser would send, streamed from the file.
  const boundary = "----plumbline-bench";
  const head = `--${boundary}\r\nContent-Disposition: form-data; name="datasetName"\r\n\r\nadbench\r\n--${boundary}\r\nContent-Disposition: form-data; name="file"; filename="adbench.csv"\r\nContent-Type: text/csv\r\n\r\n`;
  const tail = `\r\n--${boundary}--\r\n`;
  async function* body() {
    yield Buffer.from(head);
    for await (const chunk of createReadStream(csvPath, { highWaterMark: 1 << 20 })) yield chunk as Buffer;
    yield Buffer.from(tail);
  }
  const request = new Request("http://localhost/studies/s-bench/datasets/upload", {
    method: "POST",
    headers: { "Content-Type": `multipart/form-data; boundary=${boundary}` },
    body: Readable.toWeb(Readable.from(body())) as ReadableStream<Uint8Array>,
    duplex: "half",
  } as RequestInit);

  const t0 = performance.now();
  const received = await receiveUpload(request);
  const tReceived = performance.now();
  let parseStart = 0;
  let parseEnd = 0;
  const result = await svc.uploadDataset(
    actor,
    { studyId: "s-bench", datasetName: "adbench", ...received.file!, keyColumns: [] },
    (phase, fraction) => {
      if (phase === "parse" && parseStart === 0) parseStart = performance.now();
      if (phase !== "parse" && parseEnd === 0) parseEnd = performance.now();
      void fraction;
    },
  );
  if (!result.ok) throw new Error(`The benchmark file was refused: ${result.problems.join(" ")}`);
  const preview = await svc.readRowsWindow("s-bench", result.versionId, { offset: 0, limit: 200 });
  const tPreview = performance.now();
  const sorted = await svc.readRowsWindow("s-bench", result.versionId, {
    offset: 100_000 % rows,
    limit: 200,
    sort: { column: "base", descending: false },
  });
  const tSorted = performance.now();
  if (!preview || !sorted) throw new Error("The preview could not be read.");

  const detail = await svc.getVersionDetail("s-bench", result.versionId);
  for (const hit of detail?.hits ?? [])
    await svc.recordNotIdentifier(
      actor,
      "s-bench",
      hit.id,
      "Benchmark data: invented values, no person behind them.",
    );
  const locked = await svc.lockVersion(
    { ...actor, signedInAt: new Date().toISOString() },
    "s-bench",
    result.versionId,
  );
  if (!locked.ok) throw new Error(locked.message);
  clearInterval(sampler);

  const child = spawnSync(
    process.execPath,
    ["--import", "tsx", "scripts/bench-datasets.ts", "--load", result.versionId],
    { env: process.env, encoding: "utf8" },
  );
  if (child.status !== 0) throw new Error(`Loading the locked version failed: ${child.stderr}`);
  const load = JSON.parse(child.stdout.trim().split("\n").pop() as string) as {
    ms: number;
    rows: number;
    columns: number;
  };

  const mb = bytes / 1e6;
  const s = (ms: number) => `${(ms / 1000).toFixed(2)} s`;
  const lines = [
    `Dataset benchmark: ${rows.toLocaleString("en-GB")} rows x 25 columns, ${mb.toFixed(1)} MB CSV (generated), ${os.cpus().length} CPU cores, Node ${process.version}`,
    `  upload received (multipart to disk, SHA-256)   ${s(tReceived - t0)}`,
    `  parse and checks                               ${s((parseEnd || tPreview) - (parseStart || tReceived))}  (${(mb / (((parseEnd || tPreview) - (parseStart || tReceived)) / 1000)).toFixed(1)} MB/s, ${Math.round(rows / (((parseEnd || tPreview) - (parseStart || tReceived)) / 1000)).toLocaleString("en-GB")} rows/s)`,
    `  upload-to-preview (first 200 rows)             ${s(tPreview - t0)}   target <= 15 s`,
    `  first sorted window (sort 200 000 rows)        ${s(tSorted - tPreview)}`,
    `  peak RSS during upload                         ${((peak - 0) / 2 ** 20).toFixed(0)} MiB (before upload ${(rssBefore / 2 ** 20).toFixed(0)} MiB)   target <= 1024 MiB`,
    `  load locked version for a rerun (new process)  ${s(load.ms)} for ${load.rows.toLocaleString("en-GB")} x ${load.columns}   target <= 1 s`,
  ];
  console.log(lines.join("\n"));
} finally {
  clearInterval(sampler);
  rmSync(dir, { recursive: true, force: true });
}
