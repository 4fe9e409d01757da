/**
 * A rerun's stored result as the stack's server wrote it: the content-addressed file under its
 * DATA_DIR (app/.server/reruns/result-files.ts) named by the hash in the rerun's row.
 */
import { readFileSync } from "node:fs";
import path from "node:path";
import { resultRelativePath } from "../../app/.server/reruns/result-files";
import type { Stack } from "./global-setup";
import { testDb } from "./sessions";

export async function storedResultOnStack(stack: Stack, rerunId: string): Promise<string> {
  const rs = await testDb(stack).execute({
    sql: "SELECT result_sha256 FROM reruns WHERE id = ?",
    args: [rerunId],
  });
  const sha256 = rs.rows[0]?.result_sha256;
  if (typeof sha256 !== "string") throw new Error(`Rerun ${rerunId} has no stored result.`);
  return readFileSync(path.join(stack.dataDir, resultRelativePath(sha256)), "utf8");
}
