/**
 * The production server: React Router's request handler on Express with compression, static
 * files and a request log, as `react-router-serve` runs it, plus the headers static files need
 * as much as pages do. `react-router-serve` answers static files before any route middleware
 * runs (app/.server/security.server.ts never sees them) and offers no way to add headers to
 * them, so Plumbline starts its own: static files carry `X-Content-Type-Options: nosniff` too.
 *
 * Usage: node server.mjs build/server/index.js (PORT, HOST as for react-router-serve).
 */
import path from "node:path";
import url from "node:url";
import { createRequestHandler } from "@react-router/express";
import compression from "compression";
import express from "express";
import morgan from "morgan";

process.env.NODE_ENV ??= "production";
const buildPath = path.resolve(process.argv[2] ?? "build/server/index.js");
const build = await import(url.pathToFileURL(buildPath).href);

const app = express();
app.disable("x-powered-by");
app.use(compression());
// The app's own answers get nosniff from the security middleware; static files here.
const setHeaders = (res) => res.setHeader("X-Content-Type-Options", "nosniff");
// Static files all have an extension (favicon.svg, assets/*.js, *.css, fonts); a page's path
// has none, so pages skip the two file look-ups (a stat each, off the event loop and back)
// that would only find nothing.
const filesOnly = (serve) => (req, res, next) =>
  path.posix.extname(req.path) ? serve(req, res, next) : next();
// Fingerprinted build output never changes under its name; other files may.
app.use(
  path.posix.join(build.publicPath, "assets"),
  express.static(path.join(build.assetsBuildDirectory, "assets"), {
    immutable: true,
    maxAge: "1y",
    setHeaders,
  }),
);
app.use(build.publicPath, filesOnly(express.static(build.assetsBuildDirectory, { setHeaders })));
app.use(filesOnly(express.static("public", { maxAge: "1h", setHeaders })));
app.use(morgan("tiny"));
app.all("*", createRequestHandler({ build, mode: process.env.NODE_ENV }));

const port = Number(process.env.PORT ?? 3000);
const host = process.env.HOST;
const listening = () => console.log(`[plumbline] http://${host ?? "localhost"}:${port}`);
const server = host ? app.listen(port, host, listening) : app.listen(port, listening);
for (const signal of ["SIGTERM", "SIGINT"]) process.once(signal, () => server.close(console.error));
