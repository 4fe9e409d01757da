/**
 * The multipart receiver: the file part streams to a work file with its SHA-256 computed on the
 * way; a file over the limit is refused with a message naming the limit, and nothing is kept.
 */
import { createHash } from "node:crypto";
import { existsSync, readdirSync, readFileSync } from "node:fs";
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
    expect((err as Error).message).toBe("adeff.csv is larger than the limit of 1 kB. Split the dataset or ask an administrator to raise DATASET_MAX_BYTES.");
    expect(tmpFiles().length).toBe(before);
  });
});
