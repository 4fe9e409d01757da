import { index, layout, prefix, route, type RouteConfig } from "@react-router/dev/routes";

export default [
  // Signing in and out (single sign-on through the staff SAML identity provider).
  route("sign-in", "routes/sign-in.tsx"),
  route("auth/saml/login", "routes/auth.saml.login.ts"),
  route("auth/saml/acs", "routes/auth.saml.acs.ts"),
  route("auth/saml/logout", "routes/auth.saml.logout.ts"),
  // Sponsor readers sign in through their organisation's OpenID Connect provider.
  route("auth/oidc/login", "routes/auth.oidc.login.ts"),
  route("auth/oidc/callback", "routes/auth.oidc.callback.ts"),
  route("sign-out", "routes/sign-out.ts"),
  route("healthz", "routes/healthz.ts"),

  // The read-only JSON API for other systems: bearer tokens, OpenAPI document (app/.server/api).
  ...prefix("api/v1", [
    route("openapi.json", "routes/api.v1.openapi.ts"),
    route("studies", "routes/api.v1.studies.ts"),
    route("studies/:studyId", "routes/api.v1.study.ts"),
    route("studies/:studyId/datasets", "routes/api.v1.datasets.ts"),
    route("studies/:studyId/datasets/:datasetId/versions/:versionId", "routes/api.v1.dataset-version.ts"),
    route("studies/:studyId/plan-versions", "routes/api.v1.plan-versions.ts"),
    route("studies/:studyId/plan-versions/:versionId", "routes/api.v1.plan-version.ts"),
    route("studies/:studyId/reruns", "routes/api.v1.reruns.ts"),
    route("studies/:studyId/reruns/:rerunId", "routes/api.v1.rerun.ts"),
    route("studies/:studyId/deviations", "routes/api.v1.deviations.ts"),
    route("studies/:studyId/appendices", "routes/api.v1.appendices.ts"),
    route("studies/:studyId/appendices/:appendixId/file", "routes/api.v1.appendix-file.ts"),
    route("*", "routes/api.v1.not-found.ts"),
  ]),

  layout("routes/shell.tsx", [
    index("routes/home.tsx"),
    route("profile", "routes/profile.tsx"),
    ...prefix("studies/:studyId", [
      layout("routes/study-layout.tsx", [
        index("routes/study-overview.tsx"),
        route("datasets", "routes/study-datasets.tsx"),
        route("datasets/upload", "routes/study-datasets-upload.ts"),
        route("datasets/:versionId", "routes/study-dataset-version.tsx"),
        route("datasets/:versionId/rows", "routes/study-dataset-rows.ts"),
        route("plans", "routes/study-plans.tsx"),
        route("plans/:versionId", "routes/study-plan-version.tsx"),
        route("plans/:versionId/models/:modelId", "routes/study-planned-model.tsx"),
        route("reruns", "routes/study-reruns.tsx"),
        route("reruns/:rerunId/figures/:figure", "routes/study-rerun-figures.ts"),
        route("reruns/:rerunId", "routes/study-rerun.tsx"),
        route("deviations", "routes/study-deviations.tsx"),
        route("appendix", "routes/study-appendix.tsx"),
        route("appendix/download", "routes/study-appendix-download.ts"),
        route("reports", "routes/study-reports.tsx"),
        route("reports/:rerunId", "routes/study-report.tsx"),
      ]),
    ]),
    ...prefix("admin", [
      route("studies", "routes/admin.studies.tsx"),
      route("people", "routes/admin.people.tsx"),
      route("audit", "routes/admin.audit.tsx"),
      route("audit/export.csv", "routes/admin.audit-export.ts"),
      route("api-clients", "routes/admin.api-clients.tsx"),
      route("outbox", "routes/admin.outbox.tsx"),
    ]),
  ]),
  route("*", "routes/not-found.tsx"),
] satisfies RouteConfig;
