/**
 * Compute threads: work that would hold the web process's event loop for long (reruns and
 * their sensitivity variants, the what-if's refit, rendering the Word appendix, reading an
 * upload) runs in worker threads through tinypool, one fewer than the
 * machine's cores (at least one), so requests, the job heartbeat and the rest keep being
 * served while a large model is fitted.
 *
 * The threads run the built entry `compute-worker.js` beside the server build
 * (build/server/, made by `npm run build`). Where it is not there, as when the modules are
 * imported from source by the tests or the dev server, a task runs in this process instead:
 * same code, same result, only on the event loop.
 */
import { existsSync } from "node:fs";
import { availableParallelism } from "node:os";
import path from "node:path";
import { fileURLToPath } from "node:url";
import Tinypool from "tinypool";
import type { AppendixContent } from "~/shared/appendix-content";
import { renderDocx } from "../appendix/docx.server";
import type { WhatIfInputs } from "~/components/figures/what-if-inputs";
import { MessageChannel } from "node:worker_threads";
import { rerunTask, type RerunTaskInput, type RerunTaskOutput } from "./rerun-task";
import { uploadTask, type UploadTaskInput, type UploadTaskOutput } from "./upload-task";
import { whatIfTask, type WhatIfTaskInput } from "./what-if-task";

const WORKER_FILE = "compute-worker.js";

/**
 * The built worker entry in the server build's folder (this module's built chunk is there or
 * in its assets/ folder), or null when running from source.
 */
function builtWorkerFile(): string | null {
  const here = path.dirname(fileURLToPath(import.meta.url));
  const file = [path.join(here, WORKER_FILE), path.join(here, "..", WORKER_FILE)].find((f) => existsSync(f));
  return file ?? null;
}

/** Threads per pool: the machine's cores less one for the web process, at least one. */
export function computeThreads(): number {
  return Math.max(1, availableParallelism() - 1);
}

/**
 * Three pools: reruns (background jobs, which may take minutes), requests that someone waits
 * for (the what-if on the results page, the appendix export), so that those never queue behind
 * a large rerun, and uploads being read (a large one takes a minute; it holds up neither).
 */
type PoolKind = "jobs" | "requests" | "uploads";
const pools = new Map<PoolKind, Tinypool | null>();

function computePool(kind: PoolKind): Tinypool | null {
  if (pools.has(kind)) return pools.get(kind) ?? null;
  const filename = builtWorkerFile();
  const pool = filename
    ? new Tinypool({ filename, minThreads: 0, maxThreads: computeThreads(), idleTimeout: 10 * 60_000 })
    : null;
  pools.set(kind, pool);
  return pool;
}

/** Runs a rerun's computation in a compute thread (or here, from source). */
export function runRerunTask(input: RerunTaskInput): Promise<RerunTaskOutput> {
  const p = computePool("jobs");
  return p ? (p.run(input, { name: "rerun" }) as Promise<RerunTaskOutput>) : rerunTask(input);
}

/**
 * Reads, checks, screens and stores the columns of an upload in a compute thread (or here, from
 * source), its reading's progress reported to `onProgress` as it goes.
 */
export async function runUploadTask(
  input: Omit<UploadTaskInput, "progressPort">,
  onProgress: (fraction: number) => void,
): Promise<UploadTaskOutput> {
  const p = computePool("uploads");
  if (!p) return uploadTask(input, onProgress);
  const { port1, port2 } = new MessageChannel();
  port1.on("message", (f: number) => onProgress(f));
  try {
    return (await p.run(
      { ...input, progressPort: port2 },
      { name: "upload", transferList: [port2] },
    )) as UploadTaskOutput;
  } finally {
    port1.close();
  }
}

/** Builds a rerun's what-if inputs in a compute thread (or here, from source). */
export function runWhatIfTask(input: WhatIfTaskInput): Promise<WhatIfInputs> {
  const p = computePool("requests");
  return p ? (p.run(input, { name: "whatIf" }) as Promise<WhatIfInputs>) : whatIfTask(input);
}

/** Renders the Word appendix of a content model in a compute thread (or here, from source). */
export async function renderDocxTask(content: AppendixContent): Promise<Buffer> {
  const p = computePool("requests");
  if (!p) return renderDocx(content);
  // a Buffer crosses the thread boundary as a Uint8Array
  const bytes = (await p.run(content, { name: "appendix" })) as Uint8Array;
  return Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength);
}

/** Stops the threads (tests and scripts that end their process cleanly). */
export async function stopComputePools(): Promise<void> {
  for (const pool of pools.values()) if (pool) await pool.destroy();
  pools.clear();
}
