/**
 * Child process for the full-disk upload test: started under a file-size limit of the kernel,
 * it receives an upload larger than that limit and reports, as one JSON line, how it was
 * refused and what was left in the work folder. Reaching the report at all means the process
 * survived the failed write.
 */
import { existsSync, readdirSync } from "node:fs";
import path from "node:path";

const { receiveUpload, UploadRefused } = await import("~/.server/datasets/upload.server");

const form = new FormData();
form.append("datasetName", "adfull");
form.append(
  "file",
  new File([Buffer.alloc(Number(process.env.UPLOAD_BYTES ?? 3_000_000), 0x61)], "adfull.csv", {
    type: "text/csv",
  }),
);
const request = new Request("http://localhost/studies/s/datasets/upload", { method: "POST", body: form });
let status = 0;
let message = "";
try {
  await receiveUpload(request, 100_000_000);
  message = "stored";
} catch (e) {
  status = e instanceof UploadRefused ? e.status : -1;
  message = e instanceof Error ? e.message : String(e);
}
// Give a stray error event a moment to surface (it would end the process before the report).
await new Promise((r) => setTimeout(r, 200));
const tmp = path.join(process.env.DATA_DIR as string, "datasets", "tmp");
process.stdout.write(
  JSON.stringify({ status, message, tmp: existsSync(tmp) ? readdirSync(tmp) : [], alive: true }) + "\n",
);
