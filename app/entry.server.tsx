import { randomBytes } from "node:crypto";
import { PassThrough } from "node:stream";
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
          const body = new PassThrough();
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
    setTimeout(abort, streamTimeout + 1000);
  });
}
