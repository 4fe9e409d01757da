/**
 * A diagnostic for measuring, off by default: with `PLUMBLINE_TRACE_EVENT_LOOP=1` the web
 * process logs every second in which its event loop was held for more than 50 ms (the longest
 * delay, from `perf_hooks.monitorEventLoopDelay`), and `traceStep` logs the time of each step
 * of long work (a rerun's completion), so a stall can be laid beside the step that caused it.
 * `npm run bench:server` turns it on and prints what the server logged.
 */
import { monitorEventLoopDelay } from "node:perf_hooks";

const enabled = () => process.env.PLUMBLINE_TRACE_EVENT_LOOP === "1";

let started = false;

/** Starts the once-a-second report of event-loop stalls (when enabled). */
export function startEventLoopTrace(): void {
  if (!enabled() || started) return;
  started = true;
  const h = monitorEventLoopDelay({ resolution: 10 });
  h.enable();
  setInterval(() => {
    const maxMs = h.max / 1e6;
    if (maxMs > 50) console.log(`[event-loop] ${new Date().toISOString()} held ${maxMs.toFixed(0)} ms`);
    h.reset();
  }, 1000).unref();
}

/** Logs one step of long work with the time since its start (when enabled). */
export function traceStep(work: string, step: string, since: number): void {
  if (enabled())
    console.log(
      `[step] ${new Date().toISOString()} ${work}: ${step} at ${(performance.now() - since).toFixed(0)} ms`,
    );
}
