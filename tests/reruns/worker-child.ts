/**
 * Child process for the rerun kill test: a server's background work and nothing else (the job
 * worker with its handlers, started exactly as the server entry starts it), on the database
 * and data folder named in the environment. Says "started" and runs until it is killed.
 */
const { startBackgroundWork } = await import("~/.server/background.server");
startBackgroundWork();
process.stdout.write("started\n");
// The worker's timers do not keep a process alive on their own.
setInterval(() => undefined, 60_000);

export {};
