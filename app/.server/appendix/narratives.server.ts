/**
 * The medical writer's narrative: paragraphs per appendix section and plan version, kept as
 * numbered versions (a save adds a version; nothing is overwritten), each with its author.
 * The appendix shows the newest version of each section.
 */
import { and, desc, eq } from "drizzle-orm";
import { z } from "zod";
import { appendAudit } from "../audit.server";
import { db, isoNow, newId, t, writeTransaction } from "../db/index.server";
import type { PersonActor } from "../people.server";
import { NARRATIVE_SECTIONS, type NarrativeSection } from "~/shared/appendix-content";

export interface Narrative {
  id: string;
  section: NarrativeSection;
  version: number;
  body: string;
  authorName: string | null;
  createdAt: string;
}

export const NarrativeInput = z.object({
  section: z.enum(NARRATIVE_SECTIONS, { message: "Choose one of the appendix sections." }),
  body: z.string().max(20_000, "Keep a section's narrative under 20,000 characters."),
});

async function versionsOf(studyId: string, planVersionId: string) {
  const rows = await db
    .select({ n: t.appendixNarratives, who: t.people.displayName })
    .from(t.appendixNarratives)
    .leftJoin(t.people, eq(t.people.id, t.appendixNarratives.authorId))
    .where(
      and(eq(t.appendixNarratives.studyId, studyId), eq(t.appendixNarratives.planVersionId, planVersionId)),
    )
    .orderBy(desc(t.appendixNarratives.version));
  return rows.map(({ n, who }): Narrative => ({
    id: n.id,
    section: n.section as NarrativeSection,
    version: n.version,
    body: n.body,
    authorName: who,
    createdAt: n.createdAt,
  }));
}

/** The newest version of each section's narrative. */
export async function currentNarratives(
  studyId: string,
  planVersionId: string,
): Promise<Map<NarrativeSection, Narrative>> {
  const out = new Map<NarrativeSection, Narrative>();
  for (const n of await versionsOf(studyId, planVersionId)) if (!out.has(n.section)) out.set(n.section, n);
  return out;
}

/** Every version, newest first, per section. */
export async function narrativeHistory(
  studyId: string,
  planVersionId: string,
): Promise<Record<NarrativeSection, Narrative[]>> {
  const all = await versionsOf(studyId, planVersionId);
  return Object.fromEntries(NARRATIVE_SECTIONS.map((s) => [s, all.filter((n) => n.section === s)])) as Record<
    NarrativeSection,
    Narrative[]
  >;
}

/** Saves a new version of a section's narrative; an unchanged text adds nothing. Returns the version shown. */
export async function saveNarrative(
  actor: PersonActor,
  studyId: string,
  planVersionId: string,
  section: NarrativeSection,
  body: string,
): Promise<number> {
  const text = body.replace(/\r\n/g, "\n").trim();
  return writeTransaction(async (tx) => {
    const [last] = await tx
      .select()
      .from(t.appendixNarratives)
      .where(
        and(
          eq(t.appendixNarratives.studyId, studyId),
          eq(t.appendixNarratives.planVersionId, planVersionId),
          eq(t.appendixNarratives.section, section),
        ),
      )
      .orderBy(desc(t.appendixNarratives.version))
      .limit(1);
    if (last && last.body === text) return last.version;
    if (!last && text === "") return 0;
    const version = (last?.version ?? 0) + 1;
    const id = newId();
    await tx.insert(t.appendixNarratives).values({
      id,
      studyId,
      planVersionId,
      section,
      version,
      body: text,
      authorId: actor.id,
      createdAt: isoNow(),
    });
    await appendAudit(
      {
        actor,
        action: "appendix.narrate",
        entityType: "appendix_narrative",
        entityId: id,
        studyId,
        before: last ? { version: last.version } : undefined,
        after: { planVersionId, section, version, characters: text.length },
      },
      tx,
    );
    return version;
  });
}
