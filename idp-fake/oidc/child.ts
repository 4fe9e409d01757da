/**
 * Runs the fake OpenID Connect provider in its own process (started by launch.ts with tsx's
 * loader). Options come as one JSON argument. It prints "ready" once listening, and ends when
 * the process that started it goes away, even if that process was killed outright: the parent
 * holds this process's stdin open, and it closes when the parent ends.
 */
import { runOidcFake, type OidcFakeOptions } from "./server";

const options = JSON.parse(process.argv[2] ?? "{}") as OidcFakeOptions;
process.stdin.on("end", () => process.exit(0));
process.stdin.on("error", () => process.exit(0));
process.stdin.resume();
try {
  const fake = await runOidcFake(options);
  console.log(`ready ${fake.issuerUrl}`);
  const stop = (): void => void fake.close().then(() => process.exit(0));
  process.on("SIGTERM", stop);
  process.on("SIGINT", stop);
} catch (error) {
  const e = error as NodeJS.ErrnoException;
  console.error(
    e.code === "EADDRINUSE"
      ? `Port ${options.port} on ${options.host} is already in use: stop what is using it or start the fake OpenID Connect provider on another port.`
      : `The fake OpenID Connect provider could not start: ${e.message}`,
  );
  process.exit(1);
}
