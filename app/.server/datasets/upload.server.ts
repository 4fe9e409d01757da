/**
 * Receives a multipart dataset upload as a stream: the file part goes straight to a work file
 * (hashed on the way), never whole into memory, and the size limit is enforced as bytes
 * arrive.
 *
 * busboy rather than @remix-run/form-data-parser: the latter (0.17) collects each file part's
 * chunks in memory before handing it over, which a 200 MB upload cannot afford.
 */
import { createHash } from "node:crypto";
import { createWriteStream } from "node:fs";
import { Readable } from "node:stream";
import type { ReadableStream as WebReadableStream } from "node:stream/web";
import busboy from "busboy";
import { config } from "../config.server";
import { newWorkPath, removeQuietly } from "./store.server";

export interface ReceivedUpload {
  fields: Record<string, string>;
  file: { fileName: string; workPath: string; byteSize: number; sha256: string } | null;
}

export class UploadRefused extends Error {
  constructor(
    message: string,
    readonly status: number,
  ) {
    super(message);
  }
}

export function formatBytes(n: number): string {
  if (n >= 1_000_000) return `${(n / 1_000_000).toFixed(n % 1_000_000 === 0 ? 0 : 1)} MB`;
  if (n >= 1_000) return `${(n / 1_000).toFixed(0)} kB`;
  return `${n} bytes`;
}

/** Streams the request's form to disk. The caller owns (and must remove) the work file. */
export async function receiveUpload(request: Request, maxBytes = config.DATASET_MAX_BYTES): Promise<ReceivedUpload> {
  const type = request.headers.get("Content-Type") ?? "";
  if (!type.startsWith("multipart/form-data") || !request.body) {
    throw new UploadRefused("Send the dataset as a multipart form (the upload form does this).", 400);
  }
  const declared = Number(request.headers.get("Content-Length") ?? "0");
  if (declared > maxBytes + 64 * 1024) {
    throw new UploadRefused(`The file is larger than the limit of ${formatBytes(maxBytes)}. Split the dataset or ask an administrator to raise DATASET_MAX_BYTES.`, 413);
  }
  const fields: Record<string, string> = {};
  let file: ReceivedUpload["file"] = null;
  let workPath: string | null = null;
  const parser = busboy({ headers: { "content-type": type }, limits: { files: 1, fileSize: maxBytes, fields: 20, fieldSize: 10_000 } });
  const done = new Promise<void>((resolve, reject) => {
    const writes: Promise<void>[] = [];
    parser.on("field", (name, value) => (fields[name] = value));
    parser.on("file", (name, stream, info) => {
      if (name !== "file" || file || !info.filename) {
        stream.resume();
        return;
      }
      let truncated = false;
      stream.on("limit", () => (truncated = true));
      writes.push(
        (async () => {
          workPath = await newWorkPath("upload");
          const hash = createHash("sha256");
          let size = 0;
          const out = createWriteStream(workPath);
          for await (const chunk of stream as AsyncIterable<Buffer>) {
            hash.update(chunk);
            size += chunk.length;
            if (!out.write(chunk)) await new Promise<void>((r) => out.once("drain", () => r()));
          }
          await new Promise<void>((r, j) => out.end((e?: Error | null) => (e ? j(e) : r())));
          if (truncated || (stream as { truncated?: boolean }).truncated) throw new UploadRefused(`${info.filename} is larger than the limit of ${formatBytes(maxBytes)}. Split the dataset or ask an administrator to raise DATASET_MAX_BYTES.`, 413);
          file = { fileName: info.filename.split(/[\\/]/).pop() as string, workPath, byteSize: size, sha256: hash.digest("hex") };
        })(),
      );
    });
    parser.on("error", reject);
    parser.on("close", () => Promise.all(writes).then(() => resolve(), reject));
  });
  const body = Readable.fromWeb(request.body as unknown as WebReadableStream<Uint8Array>);
  body.on("error", (e) => parser.destroy(e));
  body.pipe(parser);
  try {
    await done;
  } catch (e) {
    body.destroy();
    await removeQuietly(workPath);
    if (e instanceof UploadRefused) throw e;
    throw new UploadRefused("The upload was interrupted before the whole file arrived. Nothing was stored; upload the file again.", 400);
  }
  return { fields, file };
}
