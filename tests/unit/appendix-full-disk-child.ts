/**
 * Child process for the appendix storage test: started under a file-size limit of the kernel
 * smaller than the appendix, it exports the appendix of the rerun named in the environment and
 * reports, as one JSON line, how the export ended. Reaching the report means the process
 * survived the failed write.
 */
const { exportAppendix, AppendixRefused } = await import("~/.server/appendix/appendix.server");

let status = 0;
let message = "";
try {
  await exportAppendix(JSON.parse(process.env.ACTOR as string), process.env.STUDY_ID as string, {
    kind: "rerun",
    rerunId: process.env.RERUN_ID as string,
  });
  message = "stored";
} catch (e) {
  status = e instanceof AppendixRefused ? e.status : -1;
  message = e instanceof Error ? e.message : String(e);
}
await new Promise((r) => setTimeout(r, 200));
process.stdout.write(JSON.stringify({ status, message, alive: true }) + "\n");
process.exit(0);

export {};
