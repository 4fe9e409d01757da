/**
 * The multipart receiver: the file part streams to a work file with its SHA-256 computed on the
 * way; a file over the limit is refused with a message naming the limit, and nothing is kept.
 * A file of exactly the limit is within it. A data folder that cannot be written is a clear
 * refusal, never a crash, and a full disk (a file-size limit of the kernel, set on a child
 * process) leaves the process running with no work file behind.
 */
import { spawnSync } from "node:child_process";
import { createHash } from "node:crypto";
import { existsSync, mkdirSync, readdirSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import path from "node:path";
import { describe, expect, it } from "vitest";
import { useTempDatabase } from "../support/temp-db";

const { dir } = useTempDatabase();
const { receiveUpload, UploadRefused } = await import("~/.server/datasets/upload.server");

function formRequest(content: string): Request {
  const form = new FormData();
  form.append("datasetName", "adeff");
  form.append("file", new File([content], "adeff.csv", { type: "text/csv" }));
  return new Request("http://localhost/studies/s/datasets/upload", { method: "POST", body: form });
}
const tmpFiles = () => {
  const tmp = path.join(dir, "data", "datasets", "tmp");
  return existsSync(tmp) ? readdirSync(tmp) : [];
};

describe("receiving an upload", () => {
  it("streams the file to disk with its hash and keeps the text fields", async () => {
    const content = "subjid,age\nS1,40\n";
    const got = await receiveUpload(formRequest(content), 1000);
    expect(got.fields).toEqual({ datasetName: "adeff" });
    expect(got.file?.fileName).toBe("adeff.csv");
    expect(got.file?.byteSize).toBe(content.length);
    expect(got.file?.sha256).toBe(createHash("sha256").update(content).digest("hex"));
    expect(readFileSync(got.file?.workPath ?? "", "utf8")).toBe(content);
  });

  it("refuses a file over the limit and removes what it had written", async () => {
    const before = tmpFiles().length;
    const err = await receiveUpload(formRequest("x".repeat(5000)), 1000).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(UploadRefused);
    expect((err as InstanceType<typeof UploadRefused>).status).toBe(413);
    expect((err as Error).message).toBe(
      "adeff.csv is larger than the limit of 1 kB. Split the dataset or ask an administrator to raise DATASET_MAX_BYTES.",
    );
    expect(tmpFiles().length).toBe(before);
  });

  it("accepts a file of exactly the limit and refuses one byte more", async () => {
    const before = tmpFiles().length;
    const exact = await receiveUpload(formRequest("x".repeat(1000)), 1000);
    expect(exact.file?.byteSize).toBe(1000);
    expect(readFileSync(exact.file?.workPath ?? "").length).toBe(1000);
    rmSync(exact.file?.workPath ?? "");
    const over = await receiveUpload(formRequest("x".repeat(1001)), 1000).catch((e: unknown) => e);
    expect(over).toBeInstanceOf(UploadRefused);
    expect((over as InstanceType<typeof UploadRefused>).status).toBe(413);
    expect(tmpFiles().length).toBe(before);
  });

  it("refuses with the reason when the work folder cannot be made, and keeps nothing", async () => {
    const tmp = path.join(dir, "data", "datasets", "tmp");
    rmSync(tmp, { recursive: true, force: true });
    mkdirSync(path.dirname(tmp), { recursive: true });
    // A file where the work folder should be: the same refusal as a read-only folder (which root could still write).
    writeFileSync(tmp, "not a folder");
    try {
      const err = await receiveUpload(formRequest("subjid,age\nS1,40\n"), 1000).catch((e: unknown) => e);
      expect(err).toBeInstanceOf(UploadRefused);
      expect((err as InstanceType<typeof UploadRefused>).status).toBe(507);
      expect((err as Error).message).toMatch(
        /^Plumbline could not store the uploaded file: a folder inside the data folder is missing or is not a folder \(E[A-Z]+\)\. Nothing was stored\./,
      );
    } finally {
      rmSync(tmp, { force: true });
    }
  });

  it("refuses at once, without an unhandled stream error, when the folder fails while the file is still arriving", async () => {
    const tmp = path.join(dir, "data", "datasets", "tmp");
    rmSync(tmp, { recursive: true, force: true });
    mkdirSync(path.dirname(tmp), { recursive: true });
    writeFileSync(tmp, "not a folder");
    // The file part starts and the body stays open: the refusal destroys the parser in the middle
    // of the part, whose stream then errors (busboy: "Unexpected end of file"). Unheard, that error
    // ended the server process.
    const head =
      '--XX\r\nContent-Disposition: form-data; name="file"; filename="adeff.csv"\r\nContent-Type: text/csv\r\n\r\nsubjid,age\n';
    const body = new ReadableStream<Uint8Array>({ start: (c) => c.enqueue(new TextEncoder().encode(head)) });
    const request = new Request("http://localhost/studies/s/datasets/upload", {
      method: "POST",
      body,
      headers: { "Content-Type": "multipart/form-data; boundary=XX" },
      duplex: "half",
    } as RequestInit);
    const unheard: unknown[] = [];
    const listen = (e: unknown) => unheard.push(e);
    process.on("uncaughtException", listen);
    try {
      const err = await receiveUpload(request, 1000).catch((e: unknown) => e);
      await new Promise((r) => setTimeout(r, 50));
      expect((err as InstanceType<typeof UploadRefused>).status).toBe(507);
      expect(unheard).toEqual([]);
    } finally {
      process.off("uncaughtException", listen);
      rmSync(tmp, { force: true });
    }
  });

  it("survives a full disk: the upload is refused, the process lives on and no work file is left", () => {
    const data = path.join(dir, "full-disk");
    // The kernel's file-size limit (RLIMIT_FSIZE) makes every write past 1 MB fail with EFBIG, as a full disk fails with ENOSPC.
    const child = spawnSync(
      "prlimit",
      ["--fsize=1000000", process.execPath, "--import", "tsx", "tests/datasets/full-disk-child.ts"],
      {
        env: {
          ...process.env,
          DATA_DIR: data,
          DATABASE_URL: `file:${path.join(dir, "full-disk.db")}`,
          UPLOAD_BYTES: "3000000",
        },
        encoding: "utf8",
        timeout: 60_000,
      },
    );
    expect(child.stderr).not.toMatch(/Unhandled|uncaught/i);
    expect(child.status).toBe(0);
    const report = JSON.parse(child.stdout.trim().split("\n").pop() as string) as {
      status: number;
      message: string;
      tmp: string[];
      alive: boolean;
    };
    expect(report.status).toBe(507);
    expect(report.message).toMatch(
      /^Plumbline could not store the uploaded file: the data folder is full \(EFBIG\)\. Nothing was stored\./,
    );
    expect(report.tmp).toEqual([]);
    expect(report.alive).toBe(true);
  }, 90_000);
});
