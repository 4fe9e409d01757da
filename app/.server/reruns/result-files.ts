/**
 * Where a rerun's stored result (the canonical JSON of its `RerunDocument`) lives: a
 * content-addressed file under DATA_DIR,
 *
 *   results/<aa>/<sha256>.json   the exact bytes whose SHA-256 the rerun row records
 *   results/tmp/                 work files of results being written
 *
 * written by the compute thread that computed it, so the web process never receives or writes
 * the hundreds of MB of a large rerun's result (it records only the hash and the status).
 * Results stored before lived in the row (`reruns.result_json`); `result-store.server.ts` reads
 * both and moves the old ones here. No database in this module: the compute threads import it.
 */
import { createHash, randomBytes } from "node:crypto";
import { mkdir, readdir, rename, rm, writeFile } from "node:fs/promises";
import path from "node:path";
import { canonicalJson } from "../canonical-json";

/** The result file's path relative to DATA_DIR. */
export function resultRelativePath(sha256: string): string {
  return path.join("results", sha256.slice(0, 2), `${sha256}.json`);
}

const NOT_ASCII = /[^\x00-\x7f]/;

/**
 * A document's stored form: the UTF-8 bytes of its canonical JSON and their SHA-256. The text is
 * encoded once, and the hash, the file and the size read the same bytes (hashing the text and
 * writing it encoded it twice more). Text that is all ASCII is the same bytes in Latin-1, which
 * Node copies without the UTF-8 encoder's work: about 6 ms instead of 15 ms for a 10 000-subject
 * result's 6 MB (the first read of the serializer's text joins its pieces either way).
 */
export function encodeResult(doc: unknown): { bytes: Buffer; sha256: string } {
  const json = canonicalJson(doc);
  const bytes = NOT_ASCII.test(json) ? Buffer.from(json, "utf8") : Buffer.from(json, "latin1");
  return { bytes, sha256: createHash("sha256").update(bytes).digest("hex") };
}

/**
 * Writes a result's bytes to its place (a work file in results/tmp/, then renamed, so a reader
 * never sees half a file). The same hash is the same bytes, so an existing file is replaced by
 * an identical one. Answers the path relative to DATA_DIR.
 */
export async function writeResultFile(
  dataDir: string,
  sha256: string,
  json: string | Uint8Array,
): Promise<string> {
  const relative = resultRelativePath(sha256);
  const target = path.resolve(dataDir, relative);
  const tmpDir = path.resolve(dataDir, "results", "tmp");
  await mkdir(tmpDir, { recursive: true });
  await mkdir(path.dirname(target), { recursive: true });
  const work = path.join(tmpDir, `${process.pid}-${Date.now()}-${randomBytes(6).toString("hex")}.json`);
  try {
    await writeFile(work, json);
    await rename(work, target);
  } catch (e) {
    await rm(work, { force: true }).catch(() => undefined);
    throw e;
  }
  return relative;
}

const alive = (pid: number) => {
  try {
    process.kill(pid, 0);
    return true;
  } catch (e) {
    return (e as NodeJS.ErrnoException).code === "EPERM";
  }
};

/** Removes work files in results/tmp/ left by processes that no longer run (their name starts with the pid). */
export async function sweepResultWorkFiles(dataDir: string): Promise<void> {
  const tmpDir = path.resolve(dataDir, "results", "tmp");
  const names = await readdir(tmpDir).catch(() => [] as string[]);
  for (const name of names) {
    const pid = Number(name.split("-")[0]);
    if (!Number.isInteger(pid) || pid <= 0 || !alive(pid))
      await rm(path.join(tmpDir, name), { force: true }).catch(() => undefined);
  }
}
