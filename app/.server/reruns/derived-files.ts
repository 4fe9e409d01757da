/**
 * Data derived from a stored result, kept beside it so that pages need not derive it again on the
 * request path: the page document and what-if inputs (`page`), the figure answers (`figures`).
 *
 *   results/<aa>/<sha256>.<part>.json   first line {"of": <result SHA-256>, "sha256": <of the rest>},
 *                                       then the JSON of the part
 *
 * Written by the compute thread that computed the result (work file in results/tmp/, named by pid
 * like the result's, then renamed). Derived data is not the signed result: the result's file and
 * hash stay the record. A derived file that is missing, belongs to another result or no longer
 * hashes to its header is ignored, and the reader derives again from the result itself. No
 * database: the compute threads import it.
 */
import { createHash, randomBytes } from "node:crypto";
import { mkdir, readFile, rename, rm, writeFile } from "node:fs/promises";
import path from "node:path";

export type DerivedPart = "page" | "figures";

/** The derived file's path relative to DATA_DIR. */
export function derivedRelativePath(resultSha256: string, part: DerivedPart): string {
  return path.join("results", resultSha256.slice(0, 2), `${resultSha256}.${part}.json`);
}

const sha256Of = (text: string) => createHash("sha256").update(text).digest("hex");

/** Writes a part derived from the result `resultSha256` (work file, then rename). */
export async function writeDerivedFile(
  dataDir: string,
  resultSha256: string,
  part: DerivedPart,
  value: unknown,
): Promise<void> {
  const body = JSON.stringify(value);
  const text = `${JSON.stringify({ of: resultSha256, sha256: sha256Of(body) })}\n${body}`;
  const target = path.resolve(dataDir, derivedRelativePath(resultSha256, part));
  const tmpDir = path.resolve(dataDir, "results", "tmp");
  await mkdir(tmpDir, { recursive: true });
  await mkdir(path.dirname(target), { recursive: true });
  const work = path.join(tmpDir, `${process.pid}-${Date.now()}-${randomBytes(6).toString("hex")}.json`);
  try {
    await writeFile(work, text, "utf8");
    await rename(work, target);
  } catch (e) {
    await rm(work, { force: true }).catch(() => undefined);
    throw e;
  }
}

/**
 * The part derived from the result `resultSha256`, parsed, or null when its file is missing,
 * names another result or does not hash to its header (then it is derived again).
 */
export async function readDerivedFile<T>(
  dataDir: string,
  resultSha256: string,
  part: DerivedPart,
): Promise<T | null> {
  let text: string;
  try {
    text = await readFile(path.resolve(dataDir, derivedRelativePath(resultSha256, part)), "utf8");
  } catch (e) {
    if ((e as NodeJS.ErrnoException).code === "ENOENT") return null;
    throw e;
  }
  const newline = text.indexOf("\n");
  if (newline < 0) return null;
  try {
    const header = JSON.parse(text.slice(0, newline)) as { of?: unknown; sha256?: unknown };
    const body = text.slice(newline + 1);
    if (header.of !== resultSha256 || header.sha256 !== sha256Of(body)) return null;
    return JSON.parse(body) as T;
  } catch {
    return null;
  }
}
