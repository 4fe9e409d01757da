/**
 * The OpenAPI 3.1 document of /api/v1, generated from the same Zod schemas that type the
 * handlers (schemas.ts). tests/app/api.test.ts checks that every API route file has a path
 * here and every path here a route, and that real answers validate against these schemas.
 */
import { OpenApiGeneratorV31, type RouteConfig } from "@asteasolutions/zod-to-openapi";
import { z } from "zod";
import { CAUTION } from "~/shared/caution";
import { REQUESTS_PER_MINUTE } from "./rate-limit.server";
import {
  AppendicesAnswer,
  DatasetsAnswer,
  DatasetVersionAnswer,
  DeviationsAnswer,
  ErrorAnswer,
  PlanVersionAnswer,
  PlanVersionsAnswer,
  registry,
  RerunAnswer,
  RerunsAnswer,
  StudiesAnswer,
  StudyAnswer,
} from "./schemas";

const bearer = registry.registerComponent("securitySchemes", "bearerToken", {
  type: "http",
  scheme: "bearer",
  description:
    "A personal API token (plb_…) created on the Plumbline profile page. It acts with its person's study roles.",
});

const id = (description: string) => z.string().min(1).describe(description);
const studyParams = { studyId: id("The study's id (GET /api/v1/studies lists them)") };

const errorContent = { "application/json": { schema: ErrorAnswer } };
const errors = {
  401: {
    description: "No token, or the token is unknown, revoked or expired (code unauthorized)",
    content: errorContent,
  },
  403: {
    description: "The token's person has no role on the study that allows this (code forbidden)",
    content: errorContent,
  },
  404: {
    description: "No such study or item, or not visible to this role (code not_found)",
    content: errorContent,
  },
  429: {
    description: `More than ${REQUESTS_PER_MINUTE} requests a minute with this token (code rate_limited); wait the seconds in Retry-After`,
    headers: { "Retry-After": { schema: { type: "integer" as const }, description: "Seconds to wait" } },
    content: errorContent,
  },
};

function get(
  path: string,
  summary: string,
  schema: z.ZodType,
  params: Record<string, z.ZodString>,
  description?: string,
): void {
  const route: RouteConfig = {
    method: "get",
    path,
    summary,
    description,
    security: [{ [bearer.name]: [] }],
    request: Object.keys(params).length ? { params: z.object(params) } : undefined,
    responses: { 200: { description: summary, content: { "application/json": { schema } } }, ...errors },
  };
  registry.registerPath(route);
}

get("/api/v1/studies", "The studies the token's person holds a role on", StudiesAnswer, {});
get("/api/v1/studies/{studyId}", "One study", StudyAnswer, studyParams);
get(
  "/api/v1/studies/{studyId}/datasets",
  "The study's datasets with every version's metadata and SHA-256 (never rows)",
  DatasetsAnswer,
  studyParams,
  "Data managers and biostatisticians.",
);
get(
  "/api/v1/studies/{studyId}/datasets/{datasetId}/versions/{versionId}",
  "One dataset version: metadata, hash and column summaries (never rows)",
  DatasetVersionAnswer,
  { ...studyParams, datasetId: id("The dataset's id"), versionId: id("The version's id") },
  "Data managers and biostatisticians.",
);
get(
  "/api/v1/studies/{studyId}/plan-versions",
  "The study's analysis plan versions",
  PlanVersionsAnswer,
  studyParams,
  "Biostatisticians and medical writers.",
);
get(
  "/api/v1/studies/{studyId}/plan-versions/{versionId}",
  "One plan version with its planned models (model specification, checks, sensitivity analyses)",
  PlanVersionAnswer,
  { ...studyParams, versionId: id("The plan version's id") },
  "Biostatisticians and medical writers.",
);
get(
  "/api/v1/studies/{studyId}/reruns",
  "The study's reruns, newest first",
  RerunsAnswer,
  studyParams,
  "Biostatisticians and medical writers see every rerun; sponsor readers see published reruns only.",
);
get(
  "/api/v1/studies/{studyId}/reruns/{rerunId}",
  "One rerun: status, results summary, checks, findings with assessments, signatures and sensitivity comparison",
  RerunAnswer,
  { ...studyParams, rerunId: id("The rerun's id") },
  "Subject identifiers appear only for roles that may see subject-level data; others read ranks and counts. A repeated-measures rerun's per-record residuals and per-subject influence (`results.repeated.observations`, `subjects`) are given to those roles only. Sponsor readers get 404 for a rerun that is not published.",
);
get(
  "/api/v1/studies/{studyId}/deviations",
  "The study's deviation log, newest first",
  DeviationsAnswer,
  studyParams,
  "Biostatisticians and medical writers see the whole log; sponsor readers see the deviations of published reruns.",
);
get(
  "/api/v1/studies/{studyId}/appendices",
  "The study's exported Word appendices with their SHA-256",
  AppendicesAnswer,
  studyParams,
);

registry.registerPath({
  method: "get",
  path: "/api/v1/studies/{studyId}/appendices/{appendixId}/file",
  summary: "The stored .docx file of one appendix export",
  security: [{ [bearer.name]: [] }],
  request: { params: z.object({ ...studyParams, appendixId: id("The appendix export's id") }) },
  responses: {
    200: {
      description:
        "The exact stored file (its SHA-256 is the listing's sha256); the caution travels in the X-Caution header and is printed in the document",
      headers: {
        "X-Caution": { schema: { type: "string" as const }, description: "The caution" },
        "X-Content-SHA256": { schema: { type: "string" as const }, description: "SHA-256 of the file" },
      },
      content: {
        "application/vnd.openxmlformats-officedocument.wordprocessingml.document": {
          schema: {
            type: "string",
            contentMediaType: "application/vnd.openxmlformats-officedocument.wordprocessingml.document",
          },
        },
      },
    },
    ...errors,
  },
});

registry.registerPath({
  method: "get",
  path: "/api/v1/openapi.json",
  summary: "This document",
  responses: {
    200: {
      description: "The OpenAPI 3.1 document of the Plumbline API",
      content: { "application/json": { schema: { type: "object" } } },
    },
  },
});

let cached: object | null = null;

/** The document, built once per process. */
export function openApiDocument(): object {
  cached ??= {
    ...new OpenApiGeneratorV31(registry.definitions).generateDocument({
      openapi: "3.1.0",
      info: {
        title: "Plumbline API",
        version: "1",
        description: [
          "Read-only JSON API over a study's datasets (metadata and hashes, never rows), analysis plans, reruns, deviations and appendices.",
          "Authenticate with a personal token: `Authorization: Bearer plb_…`. A token acts with its person's study roles, never more. Session cookies do not authenticate API requests.",
          `Every answer carries the caution in its top-level \`caution\` field: "${CAUTION}"`,
          `Errors answer \`{ "caution": …, "error": { "code", "message" } }\` with a stable code. Each token may make ${REQUESTS_PER_MINUTE} requests a minute.`,
        ].join("\n\n"),
      },
      servers: [{ url: "/" }],
    }),
    "x-caution": CAUTION,
  };
  return cached;
}
