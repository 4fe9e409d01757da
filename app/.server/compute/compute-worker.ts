/**
 * The entry of a compute thread (tinypool runs one named export per task). Built with esbuild
 * beside the server build (`scripts/build-workers.mjs`, part of `npm run build`); imports
 * nothing that opens the database.
 *
 * Each task first lowers its thread's CPU priority, so that on a machine with few cores the web
 * process's event loop (pages, the API, the job heartbeat) is served before the computation
 * whenever both want a core. On Linux the nice value belongs to the thread: `os.setPriority(n)`
 * without a pid calls setpriority(PRIO_PROCESS, 0, n), which the kernel applies to the calling
 * thread only (setpriority(2) and sched(7), "the nice value is a per-thread attribute"; checked
 * on the 2-core machine: the thread's /proc/<pid>/task/<tid>/stat shows 19 after the call, every
 * other thread of the process 0). Reruns run in the background and yield the most; what someone
 * waits for (what-if, appendix) and uploads less. A thread only ever lowers its priority (raising
 * it back needs a privilege), and each pool runs one kind of task, so its threads keep one value.
 */
import { constants, setPriority } from "node:os";
import { renderDocx } from "../appendix/docx.server";
import { rerunTask } from "./rerun-task";
import { uploadTask } from "./upload-task";
import { whatIfTask } from "./what-if-task";

const { PRIORITY_LOW, PRIORITY_BELOW_NORMAL } = constants.priority;

/** `PLUMBLINE_COMPUTE_PRIORITY=normal` leaves them as they are, to measure the difference. */
const keepPriority = process.env.PLUMBLINE_COMPUTE_PRIORITY === "normal";

function atPriority<A extends unknown[], R>(nice: number, task: (...args: A) => R): (...args: A) => R {
  return (...args) => {
    try {
      if (!keepPriority) setPriority(nice);
    } catch {
      // not permitted here (some sandboxes): the task runs at the process's priority
    }
    return task(...args);
  };
}

export const rerun = atPriority(PRIORITY_LOW, rerunTask);
export const appendix = atPriority(PRIORITY_BELOW_NORMAL, renderDocx);
export const whatIf = atPriority(PRIORITY_BELOW_NORMAL, whatIfTask);
export const upload = atPriority(PRIORITY_BELOW_NORMAL, uploadTask);
