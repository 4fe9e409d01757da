/**
 * Starts the local fake staff identity provider: the npm package `saml-idp` in its own child
 * process (child.cjs, which also ends when this process ends), behind a small front that adds a
 * demo-person picker to its sign-in step.
 *
 *   browser ──> front (port P, public) ──┬─ GET /saml/sso?SAMLRequest=… : the demo-person picker
 *                                        └─ everything else            : passed through to saml-idp
 *   saml-idp (127.0.0.1, a free port) signs every response and assertion with the key pair kept in
 *   stateDir, exactly as it would without the front. The picker only fills in saml-idp's own
 *   sign-in form (POST /signin) for the chosen person; `?form=full` shows saml-idp's editable form.
 *   The front also serves saml-idp's stylesheet without its web-font import, so nothing is
 *   fetched from the internet.
 */
import { spawn, execFileSync, type ChildProcess } from "node:child_process";
import { createWriteStream, existsSync, mkdirSync, readFileSync, writeFileSync } from "node:fs";
import http from "node:http";
import { createRequire } from "node:module";
import type { AddressInfo } from "node:net";
import path from "node:path";
import { fileURLToPath } from "node:url";
import { demoPeople, pickerPage, type DemoPerson } from "./picker";
import { ownChild } from "../owned-child";

export interface SamlIdpOptions {
  /** Public port of the identity provider (the front). */
  port: number;
  /** Interface to listen on; 127.0.0.1 unless told otherwise. */
  host?: string;
  /** Our assertion consumer service, e.g. http://localhost:5180/auth/saml/acs. */
  acsUrl: string;
  /** Our single logout endpoint, e.g. http://localhost:5180/auth/saml/logout. */
  sloUrl: string;
  /** Our entity id (the audience of every assertion). */
  audience: string;
  /** The identity provider's entity id (the Issuer of every response). */
  issuer: string;
  /** Folder for the key pair, the attribute config and the log. */
  stateDir: string;
}

export interface RunningSamlIdp {
  baseUrl: string;
  ssoUrl: string;
  sloUrl: string;
  /** PEM certificate the service provider trusts (SAML_IDP_CERT_FILE). */
  certFile: string;
  keyFile: string;
  stop(): Promise<void>;
}

const here = path.dirname(fileURLToPath(import.meta.url));
const require = createRequire(import.meta.url);

/** A self-signed RSA key pair for signing, made once per state folder. */
export function ensureKeyPair(stateDir: string): { certFile: string; keyFile: string } {
  const certFile = path.join(stateDir, "idp-public-cert.pem");
  const keyFile = path.join(stateDir, "idp-private-key.pem");
  if (!existsSync(certFile) || !existsSync(keyFile)) {
    try {
      execFileSync(
        "openssl",
        [
          "req",
          "-x509",
          "-newkey",
          "rsa:2048",
          "-nodes",
          "-subj",
          "/CN=Plumbline fake identity provider",
          "-keyout",
          keyFile,
          "-out",
          certFile,
          "-days",
          "3650",
        ],
        { stdio: "ignore" },
      );
    } catch (error) {
      throw new Error(
        `The fake identity provider could not make its key pair with openssl (${(error as Error).message}); install openssl (apt-get install openssl) and start it again.`,
      );
    }
  }
  return { certFile, keyFile };
}

/** The attributes every assertion carries; `groups` is multi-valued (comma-separated in the form). */
export const ATTRIBUTES = [
  {
    id: "email",
    optional: false,
    displayName: "E-mail address",
    description: "Work e-mail address",
    multiValue: false,
  },
  {
    id: "displayName",
    optional: false,
    displayName: "Display name",
    description: "Name shown in Plumbline",
    multiValue: false,
  },
  {
    id: "organisation",
    optional: true,
    displayName: "Organisation",
    description: "Employer or sponsor",
    multiValue: false,
  },
  {
    id: "groups",
    optional: true,
    displayName: "Groups",
    description: "Directory groups; plumbline-admins makes an administrator",
    multiValue: true,
  },
] as const;

/** The form's starting values (saml-idp needs a default for every multi-valued attribute). */
function defaultUser(people: DemoPerson[]): Record<string, string> {
  const p = people.find((x) => !x.groups.includes("plumbline-admins")) ?? people[0];
  return {
    userName: p.email,
    nameIdFormat: "urn:oasis:names:tc:SAML:1.1:nameid-format:emailAddress",
    email: p.email,
    displayName: p.displayName,
    organisation: p.organisation,
    groups: p.groups.join(","),
  };
}

function writeAttributeConfig(stateDir: string, people: DemoPerson[]): string {
  const file = path.resolve(stateDir, "saml-idp-config.cjs");
  const body =
    `// Written by idp-fake/saml/launch.ts; attribute set of the fake identity provider.\n` +
    `module.exports = ${JSON.stringify({ user: defaultUser(people), metadata: ATTRIBUTES }, null, 2)};\n`;
  writeFileSync(file, body);
  return file;
}

function freePort(host: string): Promise<number> {
  return new Promise((resolve, reject) => {
    const s = http.createServer();
    s.once("error", reject);
    s.listen(0, host, () => {
      const { port } = s.address() as AddressInfo;
      s.close(() => resolve(port));
    });
  });
}

async function waitUntilAnswering(
  url: string,
  child: ChildProcess,
  logFile: string,
  timeoutMs = 20_000,
): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  while (Date.now() < deadline) {
    if (child.exitCode !== null) {
      throw new Error(`The fake identity provider exited with code ${child.exitCode}; see ${logFile}.`);
    }
    try {
      const res = await fetch(url, { signal: AbortSignal.timeout(1000) });
      if (res.status < 500) return;
    } catch {
      // not listening yet
    }
    await new Promise((r) => setTimeout(r, 150));
  }
  throw new Error(
    `The fake identity provider did not answer at ${url} within ${timeoutMs} ms; see ${logFile}.`,
  );
}

/**
 * Passes one request through to saml-idp unchanged (cookies included, so its session holds).
 * When saml-idp fails a single logout (it keeps one shared "current person", so a logout for
 * someone else who signed in earlier fails), the browser is sent back to `logoutFailed`
 * instead of being left on saml-idp's error page.
 */
function passThrough(
  req: http.IncomingMessage,
  res: http.ServerResponse,
  upstreamPort: number,
  logoutFailed: string,
): void {
  const isLogout = new URL(req.url ?? "/", "http://front").pathname === "/saml/slo";
  const upstream = http.request(
    { host: "127.0.0.1", port: upstreamPort, method: req.method, path: req.url, headers: req.headers },
    (up) => {
      if (isLogout && (up.statusCode ?? 500) >= 400) {
        up.resume();
        res.writeHead(303, { Location: logoutFailed });
        res.end();
        return;
      }
      res.writeHead(up.statusCode ?? 502, up.headers);
      up.pipe(res);
    },
  );
  upstream.on("error", () => {
    if (!res.headersSent) res.writeHead(502, { "Content-Type": "text/plain; charset=utf-8" });
    res.end("The fake identity provider behind this front is not answering.");
  });
  req.pipe(upstream);
}

/** The hidden `_authnRequest` value saml-idp puts in its form: its own reading of the AuthnRequest. */
async function authnRequestField(
  upstreamPort: number,
  search: string,
): Promise<{ field: string | null; html: string; status: number }> {
  const res = await fetch(`http://127.0.0.1:${upstreamPort}/saml/sso${search}`);
  const html = await res.text();
  // The template HTML-escapes the value (base64 "=" arrives as "&#x3D;").
  const match = /name="_authnRequest"\s+type='hidden'\s+value='([^']+)'/.exec(html);
  const field = match
    ? match[1].replace(/&#x([0-9a-f]+);/gi, (_m, h: string) => String.fromCharCode(parseInt(h, 16)))
    : null;
  return { field: field && /^[A-Za-z0-9+/]+=*$/.test(field) ? field : null, html, status: res.status };
}

export async function startSamlIdp(opts: SamlIdpOptions): Promise<RunningSamlIdp> {
  const host = opts.host ?? "127.0.0.1";
  const stateDir = path.resolve(opts.stateDir);
  mkdirSync(stateDir, { recursive: true });
  const { certFile, keyFile } = ensureKeyPair(stateDir);
  const people = demoPeople(path.join(here, "..", "demo-people.json"));
  const configFile = writeAttributeConfig(stateDir, people);
  const upstreamPort = await freePort("127.0.0.1");
  const logFile = path.join(stateDir, "saml-idp.log");
  const log = createWriteStream(logFile, { flags: "a" });

  const idpPackage = path.dirname(require.resolve("saml-idp/package.json"));
  const stylesheet = readFileSync(path.join(idpPackage, "public", "css", "bootstrap.css"), "utf8").replace(
    /@import url\([^)]*fonts\.googleapis\.com[^)]*\);?/g,
    "",
  );
  const child = spawn(
    process.execPath,
    [
      path.join(here, "child.cjs"),
      "--host",
      "127.0.0.1",
      "--port",
      String(upstreamPort),
      "--issuer",
      opts.issuer,
      "--acsUrl",
      opts.acsUrl,
      "--sloUrl",
      opts.sloUrl,
      "--audience",
      opts.audience,
      "--cert",
      certFile,
      "--key",
      keyFile,
      "--configFile",
      configFile,
    ],
    { stdio: ["pipe", "pipe", "pipe"], env: { ...process.env, FORCE_COLOR: "0", HOST: "", PORT: "" } },
  );
  child.stdout?.pipe(log);
  child.stderr?.pipe(log);
  const owned = ownChild(child);

  const appOrigin = new URL(opts.acsUrl).origin;
  const front = http.createServer((req, res) => {
    const url = new URL(req.url ?? "/", "http://front");
    if (url.pathname === "/favicon.ico") {
      res.writeHead(204);
      res.end();
      return;
    }
    if (req.method === "GET" && url.pathname === "/css/bootstrap.css") {
      // saml-idp's stylesheet imports a web font from the internet; serve it without that line.
      res.writeHead(200, { "Content-Type": "text/css; charset=utf-8" });
      res.end(stylesheet);
      return;
    }
    const isPicker =
      req.method === "GET" && url.pathname === "/saml/sso" && url.searchParams.get("form") !== "full";
    if (!isPicker) return passThrough(req, res, upstreamPort, `${appOrigin}/sign-in?signedOut=partial`);
    void (async () => {
      try {
        const hasRequest = url.searchParams.has("SAMLRequest");
        const parsed = hasRequest ? await authnRequestField(upstreamPort, url.search) : null;
        if (parsed && !parsed.field) {
          // saml-idp could not read the request: show its own error page.
          res.writeHead(parsed.status === 200 ? 400 : parsed.status, {
            "Content-Type": "text/html; charset=utf-8",
          });
          res.end(parsed.html);
          return;
        }
        const fullForm = `/saml/sso?${new URLSearchParams([...url.searchParams, ["form", "full"]]).toString()}`;
        res.writeHead(200, { "Content-Type": "text/html; charset=utf-8", "Cache-Control": "no-store" });
        res.end(
          pickerPage({
            people,
            authnRequest: parsed?.field ?? null,
            fullFormUrl: fullForm,
            appOrigin,
            issuer: opts.issuer,
          }),
        );
      } catch {
        res.writeHead(502, { "Content-Type": "text/plain; charset=utf-8" });
        res.end("The fake identity provider behind this front is not answering.");
      }
    })();
  });
  try {
    await new Promise<void>((resolve, reject) => {
      front.once("error", reject);
      front.listen(opts.port, host, () => resolve());
    });
  } catch (error) {
    owned.kill();
    const inUse = (error as NodeJS.ErrnoException).code === "EADDRINUSE";
    throw new Error(
      inUse
        ? `Port ${opts.port} on ${host} is already in use: stop what is using it or start the fake identity provider on another port.`
        : `The fake identity provider could not listen on ${host}:${opts.port}: ${(error as Error).message}`,
    );
  }

  const baseUrl = `http://${host.includes(":") ? `[${host}]` : host}:${opts.port}`;
  try {
    await waitUntilAnswering(`http://127.0.0.1:${upstreamPort}/metadata`, child, logFile);
  } catch (error) {
    owned.kill();
    await new Promise<void>((r) => front.close(() => r()));
    throw error;
  }

  let stopped = false;
  return {
    baseUrl,
    ssoUrl: `${baseUrl}/saml/sso`,
    sloUrl: `${baseUrl}/saml/slo`,
    certFile,
    keyFile,
    async stop() {
      if (stopped) return;
      stopped = true;
      await owned.stop();
      front.closeAllConnections();
      await new Promise<void>((r) => front.close(() => r()));
      log.end();
    },
  };
}
