import { randomBytes } from "node:crypto";
import { Transform, type TransformCallback } from "node:stream";
import { createReadableStreamFromReadable } from "@react-router/node";
import { isbot } from "isbot";
import { renderToPipeableStream } from "react-dom/server";
import { ServerRouter, type EntryContext } from "react-router";
import { NonceContext } from "./components/nonce";
import { startBackgroundWork } from "./.server/background.server";
import { startCpuProfile } from "./.server/diagnostics/cpu-profile.server";
import { contentSecurityPolicy } from "./.server/security.server";

// Reruns and other jobs run in this process, off the request that queued them.
startBackgroundWork();
// Off unless PLUMBLINE_CPU_PROFILE_DIR is set (a benchmark measuring).
startCpuProfile();

export const streamTimeout = 10_000;

/**
 * React writes a page as many small chunks (its buffer is 2 KB) in one turn of the event loop,
 * and the server compresses each write with its own zlib call, a round trip through the thread
 * pool. Gathered here and passed on once per turn, a page leaves in one piece; anything that
 * streams later (a suspended part) still leaves in the turn it is written.
 */
class GatherTurn extends Transform {
  #chunks: Buffer[] = [];
  #pending = false;

  override _transform(chunk: Buffer, _encoding: BufferEncoding, done: TransformCallback): void {
    this.#chunks.push(chunk);
    if (!this.#pending) {
      this.#pending = true;
      setImmediate(() => this.#pass());
    }
    done();
  }

  override _flush(done: TransformCallback): void {
    this.#pass();
    done();
  }

  #pass(): void {
    this.#pending = false;
    if (this.#chunks.length === 0) return;
    this.push(this.#chunks.length === 1 ? this.#chunks[0] : Buffer.concat(this.#chunks));
    this.#chunks = [];
  }
}

export default function handleRequest(
  request: Request,
  responseStatusCode: number,
  responseHeaders: Headers,
  routerContext: EntryContext,
) {
  // A fresh nonce per response: the only scripts that run are the ones carrying it.
  const nonce = randomBytes(16).toString("base64");
  return new Promise<Response>((resolve, reject) => {
    let shellRendered = false;
    let timeout: NodeJS.Timeout | undefined;
    const userAgent = request.headers.get("user-agent");
    const readyOption =
      (userAgent && isbot(userAgent)) || routerContext.isSpaMode ? "onAllReady" : "onShellReady";
    const { pipe, abort } = renderToPipeableStream(
      <NonceContext.Provider value={nonce}>
        <ServerRouter context={routerContext} url={request.url} nonce={nonce} />
      </NonceContext.Provider>,
      {
        nonce,
        [readyOption]() {
          shellRendered = true;
          const body = new GatherTurn();
          body.once("end", () => clearTimeout(timeout));
          responseHeaders.set("Content-Type", "text/html; charset=utf-8");
          responseHeaders.set("Content-Security-Policy", contentSecurityPolicy(nonce));
          resolve(
            new Response(createReadableStreamFromReadable(body), {
              headers: responseHeaders,
              status: responseStatusCode,
            }),
          );
          pipe(body);
        },
        onShellError(error: unknown) {
          reject(error);
        },
        onError(error: unknown) {
          responseStatusCode = 500;
          if (shellRendered) console.error(error);
        },
      },
    );
    timeout = setTimeout(abort, streamTimeout + 1000);
  });
}
