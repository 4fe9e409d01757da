/**
 * The general request body limit (MAX_BODY_BYTES, 1 MiB by default) on the running server, for
 * bodies sent without a Content-Length (chunked transfer encoding): a large one is refused with
 * 413 while it is still arriving, on an ordinary form route and on the SAML endpoint alike; a
 * small one reaches its route exactly as the same body with a Content-Length does.
 */
import http from "node:http";
import { describe, expect, inject, it } from "vitest";

const stack = inject("stack");
const LIMIT = 1_048_576;

interface Answer {
  status: number;
  body: string;
  /** Bytes this client had handed to the socket when the answer's status line arrived. */
  sentWhenAnswered: number;
}

/** Posts `total` bytes in 64 KiB chunks without a Content-Length; stops sending once answered. */
function postChunked(path: string, total: number): Promise<Answer> {
  const url = new URL(path, stack.appUrl);
  return new Promise((resolve, reject) => {
    let sent = 0;
    let answered = false;
    const req = http.request({
      host: url.hostname,
      port: url.port,
      path: url.pathname,
      method: "POST",
      headers: { "Content-Type": "application/x-www-form-urlencoded", Origin: stack.appUrl },
    });
    req.on("response", (res) => {
      answered = true;
      const sentWhenAnswered = sent;
      let body = "";
      res.setEncoding("utf8");
      res.on("data", (d: string) => (body += d));
      res.on("end", () => {
        req.destroy();
        resolve({ status: res.statusCode ?? 0, body, sentWhenAnswered });
      });
    });
    req.on("error", (e) => (answered ? undefined : reject(e)));
    const chunk = Buffer.alloc(64 * 1024, "a");
    const pump = () => {
      while (!answered && sent < total) {
        const piece = chunk.subarray(0, Math.min(chunk.length, total - sent));
        sent += piece.length;
        if (!req.write(piece)) return void req.once("drain", pump);
      }
      if (!answered) req.end();
    };
    pump();
  });
}

describe("a body sent without a Content-Length", () => {
  for (const path of ["/auth/saml/acs", "/sign-in"]) {
    it(`is refused with 413 as soon as it passes the limit (${path})`, async () => {
      const answer = await postChunked(path, 200 * LIMIT);
      expect(answer.status).toBe(413);
      expect(answer.body).toBe(`The request body is more than ${LIMIT} bytes; the limit is ${LIMIT} bytes.`);
      // Answered while the body was still arriving: far from all of its 200 MiB was sent.
      expect(answer.sentWhenAnswered).toBeLessThan(20 * LIMIT);
    });
  }

  it("within the limit reaches the route as the same body with a Content-Length does", async () => {
    const form = "SAMLResponse=" + "A".repeat(1000);
    const url = new URL("/auth/saml/acs", stack.appUrl);
    // Two writes and no Content-Length: Node sends it chunked.
    const viaChunks = await new Promise<{ status: number; body: string }>((resolve, reject) => {
      const req = http.request(
        {
          host: url.hostname,
          port: url.port,
          path: url.pathname,
          method: "POST",
          headers: { "Content-Type": "application/x-www-form-urlencoded" },
        },
        (res) => {
          let body = "";
          res.setEncoding("utf8");
          res.on("data", (d: string) => (body += d));
          res.on("end", () => resolve({ status: res.statusCode ?? 0, body }));
        },
      );
      req.on("error", reject);
      req.write(form.slice(0, 500));
      req.end(form.slice(500));
    });
    const viaLength = await fetch(url, {
      method: "POST",
      redirect: "manual",
      headers: { "Content-Type": "application/x-www-form-urlencoded" },
      body: form,
    });
    expect(viaChunks.status).not.toBe(413);
    expect(viaChunks.status).toBe(viaLength.status);
    expect(viaChunks.body).toBe(await viaLength.text());
  });
});
