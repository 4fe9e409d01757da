// ESLint: the layer rules of DEVELOPERS.md ("Layout and the one-way flow"), a cycle check and the
// recommended rules that catch real errors. No style rules: layout is Prettier's (.prettierrc.json).
// `npm run lint`; tests/lint/layer-rules.test.ts shows each layer rule failing on a violation.
import { builtinModules } from "node:module";
import path from "node:path";
import js from "@eslint/js";
import { defineConfig } from "eslint/config";
import { createTypeScriptImportResolver } from "eslint-import-resolver-typescript";
import { importX } from "eslint-plugin-import-x";
import reactHooks from "eslint-plugin-react-hooks";
import tseslint from "typescript-eslint";

const root = import.meta.dirname;

// The npm packages the engine may import (what it imports today); every other module outside
// app/engine, and every Node built-in (the engine does no I/O), is refused.
const ENGINE_PACKAGES = [
  "zod",
  "decimal.js",
  "d3-array",
  "jstat",
  "@stdlib/math-base-special-betainc",
  // the normal quantile: accurate to 4e-16 and seven times faster than jstat's value polished by
  // Newton steps on Φ (distributions.ts); the Q-Q reading takes one per residual
  "@stdlib/math-base-special-erfcinv",
  "@stdlib/math-base-special-gammainc",
  "@stdlib/stats-lowess",
];

// A `.server` module: anything under app/.server/ or a file named *.server.ts(x).
const SERVER_DIR = "app/.server";
const SERVER_FILES = path.join(root, "app/**/*.server.{ts,tsx}");

const engineZone = {
  target: "app/engine",
  from: ".",
  // a package may resolve to its types under @types (d3-array does)
  except: [
    "app/engine",
    ...ENGINE_PACKAGES.flatMap((name) => [
      `node_modules/${name}`,
      `node_modules/@types/${name.replace(/^@(.*)\/(.*)$/, "$1__$2")}`,
    ]),
  ],
  message: "The engine imports nothing outside app/engine (DEVELOPERS.md): pass what it needs in as data.",
};
// The dataset readers: file I/O, but of the app only the engine (no database, no server, no UI).
const engineIoZone = {
  target: "app/engine-io",
  from: "app",
  except: ["engine", "engine-io"],
  message: "The dataset readers import only the engine and packages (DEVELOPERS.md).",
};
const routeZones = [
  {
    target: [SERVER_DIR, SERVER_FILES],
    from: "app/routes",
    message: "A .server module imports no route module.",
  },
  {
    target: [SERVER_DIR, SERVER_FILES],
    from: "app/routes.ts",
    message: "A .server module imports no route module.",
  },
];
const COMPONENT_MESSAGE =
  "A component imports no .server module: shared types belong where both layers may import them.";
const componentZones = (serverExceptions = []) => [
  { target: "app/components", from: SERVER_DIR, except: serverExceptions, message: COMPONENT_MESSAGE },
  { target: "app/components", from: SERVER_FILES, message: COMPONENT_MESSAGE },
];
// Code and types both layers share (app/shared): plain data and functions, so of the app only
// the engine's types and each other; no server, route or component.
const sharedZone = {
  target: "app/shared",
  from: "app",
  except: ["shared", "engine"],
  message: "app/shared imports of the app only app/shared and the engine: both layers import it.",
};
const layerRule = (serverExceptions) => [
  "error",
  {
    basePath: root,
    zones: [engineZone, engineIoZone, sharedZone, ...routeZones, ...componentZones(serverExceptions)],
  },
];

// Components that import types from the server, each with the only server modules (paths under
// app/.server) it may import. Empty: shared types live in app/shared/ (issue 19 item 3); a new
// entry needs a reason, and every other component gets the full rule.
export const COMPONENTS_IMPORTING_SERVER_TYPES = {};

// Import cycles that exist today, each with its reason; every other cycle fails the lint.
// import-x/no-cycle is switched off for these files; tests/lint/layer-rules.test.ts lints them
// with it on and expects exactly the imports listed here, so a new cycle through one of them
// still fails, and a fixed one must leave the list. no-cycle names, per file, the first import
// that leads into a cycle it has not yet walked. (Type-only imports are erased at compile time,
// verbatimModuleSyntax, and no-cycle does not count them.)
export const KNOWN_CYCLES = [
  {
    reason:
      "rerun-view hands Cox documents to cox-rerun-view, which reuses rerun-view's checkView (read when called). " +
      "To fix: checkView in a module of its own (issue 19 item 1 reworks these views).",
    imports: {
      "app/.server/reruns/rerun-view.server.ts": ["./cox-rerun-view.server"],
      "app/.server/reruns/cox-rerun-view.server.ts": ["./rerun-view.server"],
    },
  },
];

export default defineConfig(
  {
    ignores: [
      "build/**",
      ".react-router/**",
      "data/**",
      "test-results/**",
      "node_modules/**",
      "public/**",
      "drizzle/**",
      "tests/fixtures/**",
      "tests/reference/**/*.json",
    ],
  },
  js.configs.recommended,
  tseslint.configs.recommended,
  {
    files: ["**/*.{ts,tsx,js,mjs}"],
    plugins: { "import-x": importX },
    settings: {
      "import-x/resolver-next": [
        createTypeScriptImportResolver({ project: path.join(root, "tsconfig.json") }),
      ],
      "import-x/extensions": [".ts", ".tsx", ".js", ".mjs"],
    },
    languageOptions: {
      globals: { process: "readonly", console: "readonly", URL: "readonly", Buffer: "readonly" },
    },
    rules: {
      // Recommended rules switched off: style, or flags that read deliberate code as mistakes.
      "prefer-const": "off", // style
      "no-useless-assignment": "off", // initial values later overwritten; tsc checks definite assignment
      "preserve-caught-error": "off", // error chaining is a style choice here; messages name the cause
      "no-control-regex": "off", // input cleaning matches control characters on purpose
      "@typescript-eslint/no-unused-expressions": ["error", { allowShortCircuit: true, allowTernary: true }],
      "@typescript-eslint/no-unused-vars": [
        "error",
        {
          argsIgnorePattern: "^_",
          varsIgnorePattern: "^_",
          caughtErrorsIgnorePattern: "^_",
          ignoreRestSiblings: true,
        },
      ],
      "import-x/no-restricted-paths": layerRule([]),
      "import-x/no-cycle": ["error", { ignoreExternal: true }],
      "import-x/no-unresolved": ["error", { ignore: ["^virtual:", "^\\./\\+types/"] }],
    },
  },
  {
    files: ["app/**/*.{ts,tsx}"],
    plugins: { "react-hooks": reactHooks },
    rules: { "react-hooks/rules-of-hooks": "error", "react-hooks/exhaustive-deps": "error" },
  },
  {
    files: ["**/*.cjs"],
    languageOptions: {
      sourceType: "commonjs",
      globals: { require: "readonly", module: "writable", process: "readonly", __dirname: "readonly" },
    },
    rules: { "@typescript-eslint/no-require-imports": "off" },
  },
  {
    files: ["app/engine/**"],
    rules: {
      "no-restricted-imports": [
        "error",
        {
          paths: builtinModules.map((name) => ({
            name,
            message: "The engine does no I/O: no Node built-ins.",
          })),
          patterns: [{ group: ["node:*"], message: "The engine does no I/O: no Node built-ins." }],
        },
      ],
    },
  },
  ...Object.entries(COMPONENTS_IMPORTING_SERVER_TYPES).map(([file, modules]) => ({
    files: [file],
    rules: { "import-x/no-restricted-paths": layerRule(modules) },
  })),
  ...KNOWN_CYCLES.map(({ imports }) => ({
    files: Object.keys(imports),
    rules: { "import-x/no-cycle": "off" },
  })),
);
