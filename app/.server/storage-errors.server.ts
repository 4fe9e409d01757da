/**
 * What a failed write to the data folder means, in words an administrator can act on. Every
 * writer of files under DATA_DIR (uploads, the dataset store, appendix exports) turns an error
 * of the file system into a refusal through this one description.
 */

/** Error codes of the file system that mean "this write cannot succeed until someone fixes the disk". */
const FULL = new Set(["ENOSPC", "EDQUOT", "EFBIG"]);
const READ_ONLY = new Set(["EROFS", "EACCES", "EPERM"]);
const NOT_A_FOLDER = new Set(["ENOTDIR", "EISDIR", "EEXIST", "ENOENT"]);

const OTHER = new Set(["EIO", "EMFILE", "ENFILE", "ENAMETOOLONG", "ELOOP", "EBUSY"]);

export function storageErrorCode(e: unknown): string | null {
  const code = (e as NodeJS.ErrnoException | null)?.code;
  if (typeof code !== "string") return null;
  return FULL.has(code) || READ_ONLY.has(code) || NOT_A_FOLDER.has(code) || OTHER.has(code) ? code : null;
}

/** True for an error of the file system (as opposed to a bug or a bad file). */
export function isStorageError(e: unknown): boolean {
  return storageErrorCode(e) !== null;
}

/** "the data folder is full (ENOSPC)" and the like; the caller says what could not be written. */
export function describeStorageError(e: unknown): string {
  const code = storageErrorCode(e);
  if (code && FULL.has(code)) return `the data folder is full (${code})`;
  if (code && READ_ONLY.has(code)) return `the data folder is not writable (${code})`;
  if (code && NOT_A_FOLDER.has(code))
    return `a folder inside the data folder is missing or is not a folder (${code})`;
  return `writing to the data folder failed (${code ?? (e instanceof Error ? e.message : String(e))})`;
}

/** The sentence that ends every storage refusal. */
export const STORAGE_ADVICE =
  "Nothing was stored. Ask an administrator to check the free space and permissions of DATA_DIR, then try again.";
