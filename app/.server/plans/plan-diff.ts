/**
 * A readable comparison of two plan versions: what was added, removed or changed, in the
 * words a reviewer reads (covariates, reference arm, thresholds), not as a text diff.
 */
import { describePopulation } from "~/engine/population";
import { interactionName } from "~/engine/coefficient-names";
import { CHECK_BY_KEY } from "~/engine/checks";
import { publishedInWords } from "~/engine/published-values";
import type { PlannedModel } from "./planned-model";
import { SENSITIVITY_LABELS } from "./planned-model";
import { repeatedWords } from "./repeated-planned-model";
import { COVARIANCE_STRUCTURE_WORDS } from "~/engine/repeated/repeated-names";

export interface PlanChange {
  /** Where: "Plan" or the planned model's key and title. */
  where: string;
  what: string;
}

interface HeaderLike {
  title: string;
  sapName: string | null;
  sapVersion: string | null;
  sapDate: string | null;
}

/** Time-to-event fields in reviewers' words (status, event values, strata, ties, time scale). */
function survivalDiff(a: PlannedModel["spec"], b: PlannedModel["spec"]): string[] {
  const words = (s: PlannedModel["spec"]): [string, string][] =>
    s.family === "cox"
      ? [
          ["Status", `${s.status.column} (event: ${s.status.event.join(", ")})`],
          ["Strata", s.strata.join(", ") || "none"],
          ["Ties", s.ties],
          ["Proportional-hazards time scale", s.proportionalHazards.transform],
        ]
      : [];
  const wa = new Map(words(a));
  const out: string[] = [];
  for (const [k, v] of words(b)) if (wa.get(k) !== v) out.push(`${k}: ${wa.get(k) ?? "none"} → ${v}`);
  return out;
}

/** Repeated-measures fields in reviewers' words (subject, visit and order, covariance and fallbacks, df, likelihood, primary visit). */
function repeatedDiff(a: PlannedModel["spec"], b: PlannedModel["spec"]): string[] {
  const words = (s: PlannedModel["spec"]) => ("repeated" in s ? repeatedWords(s) : []);
  const wa = new Map(words(a));
  const wb = new Map(words(b));
  const out: string[] = [];
  for (const [k, v] of words(b)) if (wa.get(k) !== v) out.push(`${k}: ${wa.get(k) ?? "none"} → ${v}`);
  for (const [k, v] of words(a)) if (!wb.has(k)) out.push(`${k}: ${v} → none`);
  return out;
}

function termText(m: PlannedModel): Map<string, string> {
  const out = new Map<string, string>();
  for (const t of m.spec.terms) {
    if ("interaction" in t) out.set(interactionName(t.interaction), "interaction");
    else
      out.set(
        t.variable,
        t.categorical ? `categorical${t.reference ? `, reference ${t.reference}` : ""}` : "continuous",
      );
  }
  return out;
}

function compareModel(a: PlannedModel, b: PlannedModel): string[] {
  const out: string[] = [];
  const field = (label: string, x: unknown, y: unknown) => {
    const sx = x === undefined || x === null || x === "" ? "none" : String(x);
    const sy = y === undefined || y === null || y === "" ? "none" : String(y);
    if (sx !== sy) out.push(`${label}: ${sx} → ${sy}`);
  };
  field("Title", a.title, b.title);
  field("Dataset", a.datasetName, b.datasetName);
  field("Population", describePopulation(a.spec.population), describePopulation(b.spec.population));
  const analysis = (s: PlannedModel["spec"]) =>
    s.family === "cox" ? { means: undefined, contrasts: undefined, multiplicity: undefined } : s;
  field("Adjusted-means weighting", analysis(a.spec).means ?? "equal", analysis(b.spec).means ?? "equal");
  field(
    "Treatment contrasts",
    analysis(a.spec).contrasts ?? "reference",
    analysis(b.spec).contrasts ?? "reference",
  );
  field(
    "Multiplicity adjustment",
    analysis(a.spec).multiplicity ?? "none",
    analysis(b.spec).multiplicity ?? "none",
  );
  field("Endpoint", a.spec.response, b.spec.response);
  const familyOf = (s: PlannedModel["spec"]) => ("repeated" in s ? "repeated measures (MMRM)" : s.family);
  field("Family", familyOf(a.spec), familyOf(b.spec));
  field("Link", "link" in a.spec ? a.spec.link : undefined, "link" in b.spec ? b.spec.link : undefined);
  if (a.spec.family === "cox" || b.spec.family === "cox")
    for (const line of survivalDiff(a.spec, b.spec)) out.push(line);
  if ("repeated" in a.spec || "repeated" in b.spec)
    for (const line of repeatedDiff(a.spec, b.spec)) out.push(line);
  field("Treatment", a.spec.treatment, b.spec.treatment);
  field("Weights", a.spec.weights, b.spec.weights);
  field("Offset", a.spec.offset, b.spec.offset);
  field("Subject id", a.spec.id, b.spec.id);
  const ta = termText(a);
  const tb = termText(b);
  for (const [k, v] of tb) if (!ta.has(k)) out.push(`Term added: ${k} (${v})`);
  for (const [k, v] of ta) if (!tb.has(k)) out.push(`Term removed: ${k} (${v})`);
  for (const [k, v] of ta) if (tb.has(k) && tb.get(k) !== v) out.push(`Term ${k}: ${v} → ${tb.get(k)}`);
  for (const cb of b.checks) {
    const ca = a.checks.find((c) => c.key === cb.key);
    const label = CHECK_BY_KEY.get(cb.key)?.label ?? cb.key;
    if (!ca) out.push(`Check added: ${label}`);
    else {
      if (ca.enabled !== cb.enabled)
        out.push(
          `Check ${label}: ${ca.enabled ? "planned" : "not planned"} → ${cb.enabled ? "planned" : "not planned"}`,
        );
      if (ca.threshold !== cb.threshold)
        out.push(`Check ${label}: threshold ${ca.threshold} → ${cb.threshold}`);
      if (ca.remedy !== cb.remedy) out.push(`Check ${label}: planned remedy changed`);
    }
  }
  const sa = new Set(a.sensitivity.map((s) => s.kind));
  const sb = new Set(b.sensitivity.map((s) => s.kind));
  for (const k of sb) if (!sa.has(k)) out.push(`Sensitivity analysis added: ${SENSITIVITY_LABELS[k]}`);
  for (const k of sa) if (!sb.has(k)) out.push(`Sensitivity analysis removed: ${SENSITIVITY_LABELS[k]}`);
  const tauA = a.sensitivity.find((s) => s.kind === "cox_rmst")?.tau;
  const tauB = b.sensitivity.find((s) => s.kind === "cox_rmst")?.tau;
  if (tauA !== undefined && tauB !== undefined && tauA !== tauB)
    out.push(`${SENSITIVITY_LABELS.cox_rmst}: horizon τ ${tauA} → ${tauB}`);
  const structureA = a.sensitivity.find((s) => s.kind === "repeated_structure")?.structure;
  const structureB = b.sensitivity.find((s) => s.kind === "repeated_structure")?.structure;
  if (structureA && structureB && structureA !== structureB)
    out.push(
      `${SENSITIVITY_LABELS.repeated_structure}: ${COVARIANCE_STRUCTURE_WORDS[structureA]} → ${COVARIANCE_STRUCTURE_WORDS[structureB]}`,
    );
  const published = (m: PlannedModel) =>
    m.spec.family === "cox" ? [] : (m.spec.published ?? []).map((v) => publishedInWords(v));
  const pa = published(a);
  const pb = published(b);
  for (const v of pb) if (!pa.includes(v)) out.push(`Published value added: ${v}`);
  for (const v of pa) if (!pb.includes(v)) out.push(`Published value removed: ${v}`);
  return out;
}

export function comparePlanVersions(
  before: { header: HeaderLike; models: PlannedModel[] },
  after: { header: HeaderLike; models: PlannedModel[] },
): PlanChange[] {
  const changes: PlanChange[] = [];
  const h = (label: string, x: string | null, y: string | null) => {
    if ((x ?? "") !== (y ?? ""))
      changes.push({ where: "Plan", what: `${label}: ${x || "none"} → ${y || "none"}` });
  };
  h("Title", before.header.title, after.header.title);
  h("SAP document", before.header.sapName, after.header.sapName);
  h("SAP version", before.header.sapVersion, after.header.sapVersion);
  h("SAP date", before.header.sapDate, after.header.sapDate);
  for (const m of after.models) {
    const old = before.models.find((o) => o.key === m.key);
    const where = `${m.key} · ${m.title}`;
    if (!old) changes.push({ where, what: "Planned model added" });
    else for (const what of compareModel(old, m)) changes.push({ where, what });
  }
  for (const o of before.models)
    if (!after.models.some((m) => m.key === o.key))
      changes.push({ where: `${o.key} · ${o.title}`, what: "Planned model removed" });
  return changes;
}
