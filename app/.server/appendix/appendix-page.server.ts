/**
 * The appendix page as one answer: the signed primary reruns and plan versions to choose from,
 * the chosen scope's content with its figures as images, the narratives, and previous exports.
 */
import { NARRATIVE_SECTIONS, type NarrativeSection } from "~/shared/appendix-content";
import type { StudyAccess } from "../permissions.server";
import type { Study } from "../studies.server";
import { listAppendices } from "./appendix.server";
import { buildAppendixContent, signedPrimaryReruns, type AppendixScope } from "./build-content.server";
import { renderFigure } from "./figures.server";
import { narrativeHistory } from "./narratives.server";

/** The scope in the address: ?rerun=ID, ?planVersion=ID or the chooser's ?choice=KIND:ID; the newest signed rerun otherwise. */
function scopeOf(url: URL, fallback: string | null): AppendixScope | null {
  const [kind, id] = (url.searchParams.get("choice") ?? "").split(":");
  const rerun = url.searchParams.get("rerun") ?? (kind === "rerun" ? id : null);
  const planVersion = url.searchParams.get("planVersion") ?? (kind === "planVersion" ? id : null);
  if (planVersion) return { kind: "plan_version", planVersionId: planVersion };
  if (rerun) return { kind: "rerun", rerunId: rerun };
  return fallback ? { kind: "rerun", rerunId: fallback } : null;
}

export async function appendixPage(url: URL, { study, allowed }: StudyAccess & { study: Study }) {
  const signed = await signedPrimaryReruns(study.id);
  const planVersions = [
    ...new Map(
      signed.map((r) => [
        r.planVersionId,
        {
          id: r.planVersionId,
          version: r.planVersion,
          count: signed.filter((x) => x.planVersionId === r.planVersionId).length,
        },
      ]),
    ).values(),
  ];
  const scope = scopeOf(url, signed[0]?.id ?? null);
  const exports = (await listAppendices(study.id)).map((a) => ({
    id: a.id,
    sha256: a.sha256,
    byteSize: a.byteSize,
    exportedAt: a.exportedAt,
    by: a.exportedByName,
    reruns: a.rerunIds.length,
  }));
  if (!scope)
    return {
      studyId: study.id,
      code: study.code,
      signed,
      planVersions,
      scope,
      content: null,
      images: {},
      narratives: null,
      canNarrate: false,
      exports,
    };
  const content = await buildAppendixContent(study.id, scope);
  const images: Record<string, string> = {};
  for (const s of content.sections)
    for (const b of s.blocks)
      if (b.kind === "figure")
        images[b.key] =
          `data:image/png;base64,${(await renderFigure(b.spec as never)).png.toString("base64")}`;
  const history = await narrativeHistory(study.id, content.planVersionId);
  const narratives = Object.fromEntries(
    NARRATIVE_SECTIONS.map((s) => [s, { body: history[s][0]?.body ?? "", versions: history[s].length }]),
  ) as Record<NarrativeSection, { body: string; versions: number }>;
  return {
    studyId: study.id,
    code: study.code,
    signed,
    planVersions,
    scope,
    content,
    images,
    narratives,
    canNarrate: allowed.has("appendix.narrate"),
    exports,
  };
}
