/**
 * Child process for the kill test: uploads a large generated CSV through the datasets service
 * and reports parse progress on stdout, so the parent can kill it half-way.
 */
import { wideCsvLines } from "./generate";

const { db, t } = await import("~/.server/db/index.server");
const { uploadBytes } = await import("~/.server/datasets/datasets.server");

await db
  .insert(t.people)
  .values({
    id: "p-dana",
    email: "dana.okafor@plumbline.example",
    displayName: "Dana Okafor",
    externalId: "dana",
  })
  .onConflictDoNothing();
await db
  .insert(t.studies)
  .values({ id: "study-k", code: "K-1", title: "Kill test", sponsor: "Test sponsor" })
  .onConflictDoNothing();
const bytes = Buffer.from([...wideCsvLines(Number(process.env.ROWS ?? 60_000))].join("\n") + "\n");
let reported = -1;
await uploadBytes(
  { id: "p-dana", name: "Dana Okafor" },
  { studyId: "study-k", datasetName: "adbig", fileName: "adbig.csv", bytes },
  (phase, fraction) => {
    const step = Math.floor(fraction * 10);
    if (phase === "parse" && step !== reported) {
      reported = step;
      process.stdout.write(`parse ${step}\n`);
    }
  },
);
process.stdout.write("finished\n");
