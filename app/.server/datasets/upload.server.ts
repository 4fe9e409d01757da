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
import { pipeline } from "node:stream/promises";
import type { ReadableStream as WebReadableStream } from "node:stream/web";
import busboy from "busboy";
import { appendAudit, type Actor } from "../audit.server";
import { config } from "../config.server";
import { LINGER_MS } from "../security.server";
import { describeStorageError, isStorageError, STORAGE_ADVICE } from "../storage-errors.server";
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

/**
 * After a refusal, drops what the client is still sending for a while, so it receives the
 * refusal rather than a broken connection (destroying the body closes the connection before
 * the answer goes out); a client still sending after LINGER_MS loses its connection.
 */
function discardRest(body: Readable): void {
  if (body.destroyed || body.readableEnded) return;
  const timer = setTimeout(() => body.destroy(), LINGER_MS);
  timer.unref();
  body.once("close", () => clearTimeout(timer));
  body.once("end", () => clearTimeout(timer));
  body.on("error", () => undefined);
  body.resume();
}

/** The refusal of a file over the limit; exactly `maxBytes` bytes is still within it. */
function tooLarge(fileName: string, maxBytes: number): UploadRefused {
  return new UploadRefused(
    `${fileName} is larger than the limit of ${formatBytes(maxBytes)}. Split the dataset or ask an administrator to raise DATASET_MAX_BYTES.`,
    413,
  );
}

/** A write to the work file (or its folder) failed: the disk, not the file, is the problem. */
export function storageRefusal(e: unknown, what = "the uploaded file"): UploadRefused {
  return new UploadRefused(
    `Plumbline could not store ${what}: ${describeStorageError(e)}. ${STORAGE_ADVICE}`,
    507,
  );
}

/** Records a refused upload in the audit trail; a failure to record it (full disk) is only logged. */
export async function auditUploadRefusal(
  actor: Actor,
  studyId: string,
  after: { dataset?: string; fileName?: string; sha256?: string; byteSize?: number },
  problems: string[],
): Promise<void> {
  await appendAudit({
    actor,
    action: "dataset.upload_refused",
    entityType: "dataset",
    studyId,
    after,
    detail: problems.slice(0, 5).join("\n"),
  }).catch((e: unknown) =>
    console.error(
      "Could not record a refused upload in the audit trail:",
      e instanceof Error ? e.message : e,
    ),
  );
}

/**
 * Streams the request's form to disk. The caller owns (and must remove) the work file. Every
 * failure (too large, cut off, a write error of the disk) is an UploadRefused, and by then
 * the work file is gone.
 */
export async function receiveUpload(
  request: Request,
  maxBytes = config.DATASET_MAX_BYTES,
): Promise<ReceivedUpload> {
  const type = request.headers.get("Content-Type") ?? "";
  if (!type.startsWith("multipart/form-data") || !request.body) {
    throw new UploadRefused("Send the dataset as a multipart form (the upload form does this).", 400);
  }
  const declared = Number(request.headers.get("Content-Length") ?? "0");
  if (declared > maxBytes + 64 * 1024) throw tooLarge("The file", maxBytes);
  const fields: Record<string, string> = {};
  let file: ReceivedUpload["file"] = null;
  let workPath: string | null = null;
  // One byte over the limit: busboy marks a part truncated when it reaches `fileSize` exactly.
  const parser = busboy({
    headers: { "content-type": type },
    limits: { files: 1, fileSize: maxBytes + 1, fields: 20, fieldSize: 10_000 },
  });
  const writes: Promise<void>[] = [];
  const done = new Promise<void>((resolve, reject) => {
    parser.on("field", (name, value) => (fields[name] = value));
    parser.on("file", (name, stream, info) => {
      // A part's stream errors when the parser is destroyed under it (a refusal ends the upload
      // early): without a listener that error would end the process. The refusal is reported by
      // the write below or by the parser.
      stream.on("error", () => undefined);
      if (name !== "file" || file || writes.length > 0 || !info.filename) {
        stream.resume();
        return;
      }
      const write = (async () => {
        const fileName = info.filename.split(/[\\/]/).pop() as string;
        try {
          workPath = await newWorkPath("upload");
        } catch (e) {
          stream.resume();
          throw storageRefusal(e);
        }
        const hash = createHash("sha256");
        let size = 0;
        try {
          // pipeline listens for errors on every stage: a full disk or a vanished folder rejects here.
          await pipeline(
            stream,
            async function* (source: AsyncIterable<Buffer>) {
              for await (const chunk of source) {
                hash.update(chunk);
                size += chunk.length;
                yield chunk;
              }
            },
            createWriteStream(workPath, { flags: "wx" }),
          );
        } catch (e) {
          throw isStorageError(e) ? storageRefusal(e) : e;
        }
        if (size > maxBytes) throw tooLarge(fileName, maxBytes);
        file = { fileName, workPath, byteSize: size, sha256: hash.digest("hex") };
      })();
      writes.push(write);
      // A failed write ends the upload at once, without waiting for the rest of the body.
      write.catch(reject);
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
    body.unpipe(parser);
    discardRest(body);
    parser.destroy();
    // Let the file write settle (destroying the parser ends it) before removing its work file.
    await Promise.allSettled(writes);
    await removeQuietly(workPath);
    if (e instanceof UploadRefused) throw e;
    throw new UploadRefused(
      "The upload was interrupted before the whole file arrived. Nothing was stored; upload the file again.",
      400,
    );
  }
  return { fields, file };
}
