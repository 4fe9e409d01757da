/**
 * A published (signed) primary rerun in the shared test stack, made over HTTP the way people
 * make it, with sessions from sessions.ts: the first biostatistician writes the plan with the
 * demo study's primary model and submits it, a second approves it, the first reruns it, runs the
 * planned robust-errors analysis and assesses every finding, the second signs. Reuses a published rerun when the stack has one
 * (tests/browser/audit-flow.test.ts leaves one).
 */
import type { Stack } from "./global-setup";
import { sessionCookieFor, studyIdByCode, testDb } from "./sessions";

const PRIYA = "priya.lindqvist@plumbline.example";
const TOMAS = "tomas.berg@plumbline.example";

async function one(stack: Stack, sql: string, args: (string | number)[]): Promise<string> {
  const rs = await testDb(stack).execute({ sql, args });
  return String(rs.rows[0]?.[0] ?? "");
}

/** Posts a form as a signed-in person; returns the redirect target (or "" when the action answered in place). */
async function post(stack: Stack, cookie: string, path: string, fields: [string, string][]): Promise<string> {
  const res = await fetch(`${stack.appUrl}${path}`, {
    method: "POST",
    redirect: "manual",
    headers: { Cookie: cookie, Origin: stack.appUrl, "Content-Type": "application/x-www-form-urlencoded" },
    body: new URLSearchParams(fields),
  });
  if (res.status >= 400)
    throw new Error(`POST ${path} answered ${res.status}: ${(await res.text()).slice(0, 300)}`);
  await res.body?.cancel();
  return res.headers.get("Location") ?? "";
}

export async function ensurePublishedRerun(stack: Stack): Promise<{ studyId: string; rerunId: string }> {
  const studyId = await studyIdByCode(stack, "QMT-301");
  const existing = await one(
    stack,
    "SELECT id FROM reruns WHERE study_id = ? AND kind = 'primary' AND published_at IS NOT NULL ORDER BY published_at DESC",
    [studyId],
  );
  if (existing) return { studyId, rerunId: existing };

  const priya = await sessionCookieFor(stack, PRIYA);
  const base = `/studies/${studyId}`;
  const planUrl = await post(stack, priya, `${base}/plans`, [
    ["title", "Efficacy models (report test)"],
    ["sapName", "Statistical analysis plan QMT-301"],
    ["sapVersion", "2.0"],
    ["sapDate", "2026-10-01"],
  ]);
  const planVersionId = planUrl.split("/").pop() ?? "";
  const model: [string, string][] = [
    ["revision", "1"],
    ["key", "primary"],
    ["title", "Primary efficacy: change from baseline at week 12"],
    ["datasetName", "adeff"],
    ["populationColumn", "fasfl"],
    ["populationValue", "Y"],
    ["response", "chg"],
    ["family", "gaussian"],
    ["treatment", "arm"],
    ["treatmentReference", "Placebo"],
    ["id", "subjid"],
    ...["base", "stratum", "region", "sex", "age"].map((c): [string, string] => ["covariate", c]),
    ...[
      "cooks_distance",
      "leverage",
      "deletion_residual",
      "dfbetas_treatment",
      "dffits",
      "shapiro_wilk",
      "breusch_pagan",
      "brown_forsythe",
      "homogeneity_of_slopes",
      "reset",
      "gvif",
    ].map((c): [string, string] => [`check:${c}:enabled`, "on"]),
    ["sensitivity:robust_hc3", "on"],
  ];
  await post(stack, priya, `${base}/plans/${planVersionId}/models/new`, model);
  const plannedModelId = await one(stack, "SELECT id FROM planned_models WHERE plan_version_id = ?", [
    planVersionId,
  ]);
  if (!plannedModelId)
    throw new Error(
      "The planned model was not saved: check the form fields against app/.server/plans/planned-model.ts.",
    );
  const revision = await one(stack, "SELECT revision FROM plan_versions WHERE id = ?", [planVersionId]);
  await post(stack, priya, `${base}/plans/${planVersionId}`, [
    ["intent", "submit"],
    ["revision", revision],
  ]);
  const tomas = await sessionCookieFor(stack, TOMAS);
  await post(stack, tomas, `${base}/plans/${planVersionId}`, [["intent", "approve"]]);

  const datasetVersionId = await one(
    stack,
    "SELECT v.id FROM dataset_versions v JOIN datasets d ON d.id = v.dataset_id WHERE d.study_id = ? AND d.name = 'adeff' AND v.status = 'locked' ORDER BY v.version",
    [studyId],
  );
  const rerunUrl = await post(stack, priya, `${base}/reruns`, [
    ["plannedModelId", plannedModelId],
    ["datasetVersionId", datasetVersionId],
  ]);
  const rerunId = rerunUrl.split("/").pop() ?? "";
  const deadline = Date.now() + 60_000;
  while ((await one(stack, "SELECT status FROM reruns WHERE id = ?", [rerunId])) !== "completed") {
    if (Date.now() > deadline) throw new Error(`Rerun ${rerunId} did not complete within 60 s.`);
    await new Promise((r) => setTimeout(r, 250));
  }
  // the planned robust-errors analysis is queued by itself once the primary has completed
  while (
    (await one(stack, "SELECT count(*) FROM reruns WHERE parent_rerun_id = ? AND status = 'completed'", [
      rerunId,
    ])) !== "1"
  ) {
    if (Date.now() > deadline)
      throw new Error(`The robust-errors analysis of rerun ${rerunId} did not complete within 60 s.`);
    await new Promise((r) => setTimeout(r, 250));
  }
  const findings = await testDb(stack).execute({
    sql: "SELECT id FROM findings WHERE rerun_id = ?",
    args: [rerunId],
  });
  for (const f of findings.rows) {
    await post(stack, priya, `${base}/reruns/${rerunId}`, [
      ["intent", "assess"],
      ["findingId", String(f.id)],
      ["category", "model_assumption"],
      ["impact", "none"],
      ["action", "planned_sensitivity"],
      ["rationale", "The planned robust-errors analysis leaves the treatment conclusion unchanged."],
    ]);
  }
  // A fresh session counts as a fresh authentication for the signature.
  await post(stack, await sessionCookieFor(stack, TOMAS), `${base}/reruns/${rerunId}`, [["intent", "sign"]]);
  if (!(await one(stack, "SELECT published_at FROM reruns WHERE id = ?", [rerunId])))
    throw new Error(`Rerun ${rerunId} was not signed: see the sign-off rules in findings.server.ts.`);
  return { studyId, rerunId };
}
