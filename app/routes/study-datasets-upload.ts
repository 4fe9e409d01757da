/**
 * Dataset upload (POST, multipart): the data manager's file is streamed to disk, checked and
 * stored as the next draft version. With `Accept: application/x-ndjson` the answer streams
 * one JSON line per progress step and ends with the result, so the form can show the parse
 * as it happens. The body-size limit of other routes does not apply here; DATASET_MAX_BYTES does.
 */
import { z } from "zod";
import type { Route } from "./+types/study-datasets-upload";
import { config } from "~/.server/config.server";
import { DATASET_NAME, uploadDataset, type UploadResult } from "~/.server/datasets/datasets.server";
import { auditUploadRefusal, receiveUpload, UploadRefused } from "~/.server/datasets/upload.server";
import { removeQuietly } from "~/.server/datasets/store.server";
import { actorOf } from "~/.server/people.server";
import { requireStudy } from "~/.server/study-access.server";

export type UploadEvent =
  | { type: "progress"; phase: "parse" | "screen" | "store"; fraction: number }
  | { type: "result"; result: UploadResult };

export async function loader({ request, params }: Route.LoaderArgs) {
  await requireStudy(request, params.studyId, "dataset.upload");
  return Response.json({ maxBytes: config.DATASET_MAX_BYTES, formats: ["csv", "dataset-json", "xpt"] });
}

const nameList = z
  .string()
  .optional()
  .transform((v) =>
    (v ?? "")
      .split(/[,;\s]+/)
      .map((s) => s.trim())
      .filter(Boolean),
  );

const Fields = z
  .object({
    datasetName: z
      .string()
      .trim()
      .regex(
        DATASET_NAME,
        "Name the dataset with a letter followed by letters, digits or underscores (at most 32), for example adeff.",
      ),
    // An empty key field names no key: the file's declared key (or a detected one) applies.
    keyColumns: nameList.transform((v) => (v.length > 0 ? v : undefined)),
    numericColumns: nameList,
    readByValues: nameList,
    readByValuesReason: z.string().trim().max(2000, "Keep the reason under 2,000 characters.").optional(),
  })
  .refine((f) => f.readByValues.length === 0 || (f.readByValuesReason ?? "").length >= 10, {
    message:
      'Say why the columns named under "Read by their values" should be read that way (at least 10 characters); the reason goes into the audit trail.',
  });

function refusal(problems: string[], status: number): Response {
  const result: UploadResult = { ok: false, problems };
  return Response.json({ type: "result", result } satisfies UploadEvent, { status });
}

export async function action({ request, params }: Route.ActionArgs) {
  const { user, study } = await requireStudy(request, params.studyId, "dataset.upload");
  let received;
  try {
    received = await receiveUpload(request);
  } catch (e) {
    if (!(e instanceof UploadRefused)) throw e;
    await auditUploadRefusal(actorOf(user), study.id, {}, [e.message]);
    return refusal([e.message], e.status);
  }
  const { file } = received;
  const fields = Fields.safeParse(received.fields);
  if (!file || !fields.success) {
    await removeQuietly(file?.workPath);
    return refusal(
      [
        !file
          ? "Choose a CSV, Dataset-JSON or XPORT (.xpt) file to upload."
          : fields.error!.issues[0].message,
      ],
      400,
    );
  }
  const actor = actorOf(user);
  const run = (progress?: (e: UploadEvent) => void) =>
    uploadDataset(
      actor,
      {
        studyId: study.id,
        datasetName: fields.data.datasetName,
        ...file,
        keyColumns: fields.data.keyColumns,
        numericColumns: fields.data.numericColumns,
        readByValues:
          fields.data.readByValues.length > 0
            ? { columns: fields.data.readByValues, reason: fields.data.readByValuesReason ?? "" }
            : undefined,
      },
      (phase, fraction) => progress?.({ type: "progress", phase, fraction }),
    );
  if (!(request.headers.get("Accept") ?? "").includes("application/x-ndjson")) {
    const result = await run();
    return Response.json({ type: "result", result } satisfies UploadEvent, { status: result.ok ? 201 : 422 });
  }
  const encoder = new TextEncoder();
  const body = new ReadableStream<Uint8Array>({
    async start(controller) {
      let last = "";
      const send = (e: UploadEvent) => {
        if (e.type === "progress") {
          const step = `${e.phase}:${Math.floor(e.fraction * 50)}`;
          if (step === last) return;
          last = step;
        }
        controller.enqueue(encoder.encode(JSON.stringify(e) + "\n"));
      };
      try {
        send({ type: "result", result: await run(send) });
      } catch (e) {
        console.error(e);
        send({
          type: "result",
          result: {
            ok: false,
            problems: [
              "Plumbline could not store the file because of an internal error; nothing was stored. Try again, and tell an administrator if it happens again.",
            ],
          },
        });
      }
      controller.close();
    },
  });
  // no-transform keeps the compression layer from holding progress lines back.
  return new Response(body, {
    headers: {
      "Content-Type": "application/x-ndjson; charset=utf-8",
      "Cache-Control": "no-store, no-transform",
    },
  });
}
