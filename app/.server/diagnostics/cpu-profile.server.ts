/**
 * A diagnostic for measuring, off by default: with `PLUMBLINE_CPU_PROFILE_DIR=<dir>` the web
 * process profiles its main thread (the V8 sampling profiler through `node:inspector`, as
 * `node --cpu-prof` does) and, at each SIGUSR2, writes the profile so far to
 * `<dir>/web-<n>.cpuprofile` and starts the next one, so a benchmark can cut the profile at its
 * phases (`npm run bench:server -- --cpu-profile <dir>`). Open the files in Chrome DevTools'
 * Performance panel or any `.cpuprofile` viewer. Compute threads are not profiled here.
 */
import { writeFileSync } from "node:fs";
import { Session } from "node:inspector";
import path from "node:path";

let started = false;

export function startCpuProfile(): void {
  const dir = process.env.PLUMBLINE_CPU_PROFILE_DIR;
  if (!dir || started) return;
  started = true;
  const session = new Session();
  session.connect();
  let n = 0;
  const begin = () =>
    session.post("Profiler.enable", () =>
      session.post("Profiler.setSamplingInterval", { interval: 500 }, () => session.post("Profiler.start")),
    );
  begin();
  process.on("SIGUSR2", () => {
    session.post("Profiler.stop", (err, result) => {
      if (!err) writeFileSync(path.join(dir, `web-${++n}.cpuprofile`), JSON.stringify(result.profile));
      console.log(`[cpu-profile] web-${n}.cpuprofile written`);
      begin();
    });
  });
}
