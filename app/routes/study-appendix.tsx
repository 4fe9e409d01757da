import { Form, Link, useNavigation } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/study-appendix";
import { Caution } from "~/components/caution";
import { utc } from "~/components/format";
import { EmptyState, FieldError, PageHeader } from "~/components/page";
import { actorOf } from "~/.server/people.server";
import { AppendixRefused, exportAppendix, listAppendices } from "~/.server/appendix/appendix.server";
import { buildAppendixContent, signedPrimaryReruns, type AppendixScope } from "~/.server/appendix/build-content.server";
import { NARRATIVE_SECTIONS, SECTION_TITLES, type AppendixContent, type Block, type NarrativeSection } from "~/components/appendix-content";
import { renderFigure } from "~/.server/appendix/figures.server";
import { NarrativeInput, narrativeHistory, saveNarrative } from "~/.server/appendix/narratives.server";
import { getPlanVersion } from "~/.server/plans/plans.server";
import { requireStudy } from "~/.server/study-access.server";
import { TableScroll } from "~/components/table-scroll";

export function meta({ loaderData }: Route.MetaArgs) {
  return [{ title: `Appendix · ${loaderData?.code ?? "Study"} · Plumbline` }];
}

/** The scope in the address: ?rerun=ID, ?planVersion=ID or the chooser's ?choice=KIND:ID; the newest signed rerun otherwise. */
function scopeOf(url: URL, fallback: string | null): AppendixScope | null {
  const [kind, id] = (url.searchParams.get("choice") ?? "").split(":");
  const rerun = url.searchParams.get("rerun") ?? (kind === "rerun" ? id : null);
  const planVersion = url.searchParams.get("planVersion") ?? (kind === "planVersion" ? id : null);
  if (planVersion) return { kind: "plan_version", planVersionId: planVersion };
  if (rerun) return { kind: "rerun", rerunId: rerun };
  return fallback ? { kind: "rerun", rerunId: fallback } : null;
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const { study, allowed } = await requireStudy(request, params.studyId, "appendix.export");
  const signed = await signedPrimaryReruns(study.id);
  const planVersions = [...new Map(signed.map((r) => [r.planVersionId, { id: r.planVersionId, version: r.planVersion, count: signed.filter((x) => x.planVersionId === r.planVersionId).length }])).values()];
  const scope = scopeOf(new URL(request.url), signed[0]?.id ?? null);
  const exports = (await listAppendices(study.id)).map((a) => ({ id: a.id, sha256: a.sha256, byteSize: a.byteSize, exportedAt: a.exportedAt, by: a.exportedByName, reruns: a.rerunIds.length }));
  if (!scope) return { studyId: study.id, code: study.code, signed, planVersions, scope, content: null, images: {}, narratives: null, canNarrate: false, exports };
  const content = await buildAppendixContent(study.id, scope);
  const images: Record<string, string> = {};
  for (const s of content.sections)
    for (const b of s.blocks)
      if (b.kind === "figure") images[b.key] = `data:image/png;base64,${(await renderFigure(b.spec as never)).png.toString("base64")}`;
  const history = await narrativeHistory(study.id, content.planVersionId);
  const narratives = Object.fromEntries(NARRATIVE_SECTIONS.map((s) => [s, { body: history[s][0]?.body ?? "", versions: history[s].length }])) as Record<NarrativeSection, { body: string; versions: number }>;
  return { studyId: study.id, code: study.code, signed, planVersions, scope, content, images, narratives, canNarrate: allowed.has("appendix.narrate"), exports };
}

const Intent = z.discriminatedUnion("intent", [
  z.object({ intent: z.literal("narrate"), planVersionId: z.string().min(1), section: z.string(), body: z.string() }),
  z.object({ intent: z.literal("export"), scope: z.enum(["rerun", "plan_version"]), id: z.string().min(1) }),
]);

type ActionResult = { ok: boolean; message: string; section?: string; fieldError?: string; exported?: { id: string; sha256: string } };

export async function action({ request, params }: Route.ActionArgs): Promise<ActionResult> {
  const parsed = Intent.safeParse(Object.fromEntries(await request.formData()));
  if (!parsed.success) return { ok: false, message: "That request was not understood. Reload the page and try again." };
  const input = parsed.data;
  const { study, user } = await requireStudy(request, params.studyId, input.intent === "narrate" ? "appendix.narrate" : "appendix.export");
  if (input.intent === "narrate") {
    const n = NarrativeInput.safeParse({ section: input.section, body: input.body });
    if (!n.success) return { ok: false, message: "", section: input.section, fieldError: n.error.issues[0]?.message };
    await getPlanVersion(study.id, input.planVersionId);
    const version = await saveNarrative(actorOf(user), study.id, input.planVersionId, n.data.section, n.data.body);
    return { ok: true, section: n.data.section, message: version ? `Saved as version ${version}.` : "Nothing to save yet." };
  }
  const scope: AppendixScope = input.scope === "rerun" ? { kind: "rerun", rerunId: input.id } : { kind: "plan_version", planVersionId: input.id };
  try {
    const row = await exportAppendix(actorOf(user), study.id, scope);
    return { ok: true, message: `Exported. SHA-256 ${row.sha256}.`, exported: { id: row.id, sha256: row.sha256 } };
  } catch (e) {
    if (e instanceof AppendixRefused) return { ok: false, message: e.message };
    throw e;
  }
}

function PreviewBlock({ b, images }: { b: Block; images: Record<string, string> }) {
  switch (b.kind) {
    case "heading":
      return <h3 className="mt-4 text-base font-semibold">{b.text}</h3>;
    case "paragraph":
      return <p className="max-w-prose [overflow-wrap:anywhere]">{b.text}</p>;
    case "bullets":
      return (
        <ul className="max-w-prose list-disc space-y-1 pl-5">
          {b.items.map((item) => (
            <li key={item}>{item}</li>
          ))}
        </ul>
      );
    case "caution":
      return (
        <p className="border-y-2 border-accent py-2">
          <span className="font-semibold">Caution.</span> {b.text}
        </p>
      );
    case "narrative":
      return (
        <div className="border-l-2 border-accent pl-3" data-narrative={b.section}>
          <p className="text-xs italic text-ink-soft">
            Medical writer's narrative, version {b.version}
            {b.author ? `, ${b.author}` : ""}
          </p>
          {b.paragraphs.map((p, i) => (
            <p key={i} className="max-w-prose">
              {p}
            </p>
          ))}
        </div>
      );
    case "table":
      return (
        <TableScroll label={`Table ${b.number}`}>
          <table className="data-table" data-table-key={b.key}>
            <caption className="mb-1 text-left text-sm">
              <span className="font-semibold">Table {b.number}.</span> {b.caption}
            </caption>
            <thead>
              <tr>
                {b.columns.map((c) => (
                  <th key={c.label} scope="col" className={c.numeric ? "text-right" : ""}>
                    {c.label}
                  </th>
                ))}
              </tr>
            </thead>
            <tbody>
              {b.rows.map((r, i) => (
                <tr key={i}>
                  {r.map((v, j) => (
                    <td key={j} className={b.columns[j]?.numeric ? "num whitespace-nowrap text-right" : b.columns[j]?.prose ? "min-w-64" : ""}>
                      {v}
                    </td>
                  ))}
                </tr>
              ))}
            </tbody>
          </table>
          {b.note ? <p className="mt-1 text-xs text-ink-soft">{b.note}</p> : null}
        </TableScroll>
      );
    case "figure":
      return (
        <figure className="panel max-w-3xl p-3" data-figure-key={b.key}>
          <img src={images[b.key]} alt={b.alt} className="w-full" />
          <figcaption className="mt-2 text-sm">
            <span className="font-semibold">Figure {b.number}.</span> {b.caption}
          </figcaption>
        </figure>
      );
  }
}

function NarrativeEditor({ section, planVersionId, body, versions, result, busy }: { section: NarrativeSection; planVersionId: string; body: string; versions: number; result: ActionResult | undefined; busy: boolean }) {
  const mine = result?.section === section ? result : undefined;
  const id = `narrative-${section}`;
  return (
    <Form method="post" className="panel mt-2 space-y-2 p-3" preventScrollReset>
      <input type="hidden" name="intent" value="narrate" />
      <input type="hidden" name="planVersionId" value={planVersionId} />
      <input type="hidden" name="section" value={section} />
      <label htmlFor={id} className="label">
        Narrative for “{SECTION_TITLES[section]}” {versions ? `(version ${versions} is shown)` : "(none yet)"}
      </label>
      <textarea id={id} name="body" defaultValue={body} rows={4} className="field w-full" aria-describedby={`${id}-help ${id}-error`} />
      <p id={`${id}-help`} className="text-xs text-ink-soft">
        Separate paragraphs with an empty line. Each save keeps a new version; everything else in the appendix comes from the signed results.
      </p>
      <FieldError id={`${id}-error`} message={mine?.fieldError} />
      <div className="flex items-center gap-3">
        <button type="submit" className="btn-quiet" disabled={busy}>
          Save narrative
        </button>
        {mine?.ok ? (
          <span role="status" className="text-xs text-ink-soft">
            {mine.message}
          </span>
        ) : null}
      </div>
    </Form>
  );
}

function Preview({ content, images, narratives, canNarrate, result, busy }: { content: AppendixContent; images: Record<string, string>; narratives: Record<NarrativeSection, { body: string; versions: number }>; canNarrate: boolean; result: ActionResult | undefined; busy: boolean }) {
  const tp = content.titlePage;
  return (
    <article className="space-y-8" aria-label="Preview of the appendix">
      <section className="panel space-y-3 p-5">
        <p className="text-xs font-semibold uppercase tracking-wide text-accent">{tp.studyCode}</p>
        <h2 className="text-xl">{content.title}</h2>
        <p className="text-sm text-ink-soft">{tp.studyTitle}</p>
        <TableScroll label="Facts of the appendix">
        <table className="data-table">
          <tbody>
            {tp.facts.map((f) => (
              <tr key={`${f.label}${f.value}`}>
                <th scope="row" className="whitespace-nowrap text-left">
                  {f.label}
                </th>
                <td className="break-all">{f.value}</td>
              </tr>
            ))}
          </tbody>
        </table>
        </TableScroll>
      </section>
      {content.sections.map((s) => (
        <section key={s.key} className="space-y-3 text-sm" data-section={s.key}>
          <h2>{s.title}</h2>
          {s.blocks.map((b, i) => (
            <PreviewBlock key={i} b={b} images={images} />
          ))}
          {canNarrate && s.key !== "caution" ? (
            <NarrativeEditor section={s.key} planVersionId={content.planVersionId} body={narratives[s.key].body} versions={narratives[s.key].versions} result={result} busy={busy} />
          ) : null}
        </section>
      ))}
    </article>
  );
}

export default function Page({ loaderData, actionData }: Route.ComponentProps) {
  const { studyId, code, signed, planVersions, scope, content, images, narratives, canNarrate, exports } = loaderData;
  const nav = useNavigation();
  const busy = nav.state !== "idle";
  const exporting = nav.state === "submitting" && nav.formData?.get("intent") === "export";
  const selected = scope ? (scope.kind === "rerun" ? `rerun:${scope.rerunId}` : `planVersion:${scope.planVersionId}`) : "";
  const downloadHref = (id: string) => `/studies/${studyId}/appendix/download?id=${encodeURIComponent(id)}`;
  return (
    <>
      <PageHeader eyebrow={code} title="Word appendix" />
      {signed.length === 0 || !content || !narratives ? (
        <EmptyState title="Nothing to export yet">
          <p>When a biostatistician signs a rerun, the medical writer adds the narrative and exports the Word appendix for the clinical study report from this page.</p>
        </EmptyState>
      ) : (
        <div className="space-y-8">
          <section className="panel flex flex-wrap items-end gap-4 p-4">
            <Form method="get" className="flex flex-wrap items-end gap-3">
              <div>
                <label htmlFor="appendix-scope" className="label">
                  Appendix of
                </label>
                <select id="appendix-scope" className="field min-w-80" defaultValue={selected} name="choice">
                  <optgroup label="One signed rerun">
                    {signed.map((r) => (
                      <option key={r.id} value={`rerun:${r.id}`}>
                        {r.modelTitle}, plan v{r.planVersion}, signed {utc(r.signedAt)}
                      </option>
                    ))}
                  </optgroup>
                  <optgroup label="All signed primary reruns of a plan version">
                    {planVersions.map((p) => (
                      <option key={p.id} value={`planVersion:${p.id}`}>
                        Plan version {p.version} ({p.count} signed rerun{p.count === 1 ? "" : "s"})
                      </option>
                    ))}
                  </optgroup>
                </select>
              </div>
              <button type="submit" className="btn-quiet">
                Show
              </button>
            </Form>
            <Form method="post" className="flex items-end gap-3">
              <input type="hidden" name="intent" value="export" />
              <input type="hidden" name="scope" value={content.scope.kind} />
              <input type="hidden" name="id" value={content.scope.kind === "rerun" ? content.scope.rerunId : content.scope.planVersionId} />
              <button type="submit" className="btn" disabled={busy}>
                {exporting ? "Exporting…" : "Export the Word appendix"}
              </button>
            </Form>
            {actionData?.exported ? (
              <p role="status" className="text-sm">
                Exported.{" "}
                <a href={downloadHref(actionData.exported.id)} download>
                  Download the .docx
                </a>{" "}
                <span className="num block break-all text-xs text-ink-soft">SHA-256 {actionData.exported.sha256}</span>
              </p>
            ) : actionData && !actionData.ok && !actionData.section && actionData.message ? (
              <p role="alert" className="text-sm text-finding">
                {actionData.message}
              </p>
            ) : null}
          </section>

          <section aria-labelledby="exports-heading">
            <h2 id="exports-heading">Previous exports</h2>
            {exports.length === 0 ? (
              <p className="text-sm text-ink-soft">No export yet.</p>
            ) : (
              <TableScroll label="Previous exports">
              <table className="data-table panel">
                <thead>
                  <tr>
                    <th scope="col">Exported</th>
                    <th scope="col">By</th>
                    <th scope="col" className="text-right">
                      Reruns
                    </th>
                    <th scope="col">SHA-256</th>
                    <th scope="col">File</th>
                  </tr>
                </thead>
                <tbody>
                  {exports.map((e) => (
                    <tr key={e.id}>
                      <td className="whitespace-nowrap">{utc(e.exportedAt)}</td>
                      <td>{e.by ?? "—"}</td>
                      <td className="num text-right">{e.reruns}</td>
                      <td className="num break-all text-xs">{e.sha256}</td>
                      <td className="whitespace-nowrap">
                        <a href={downloadHref(e.id)} download>
                          Download ({Math.round(e.byteSize / 1024)} KB)
                        </a>
                      </td>
                    </tr>
                  ))}
                </tbody>
              </table>
              </TableScroll>
            )}
          </section>

          <div>
            <h2 className="mb-1">Preview</h2>
            <p className="mb-4 text-sm text-ink-soft">
              The same content the Word file holds. Only the narrative can be written here; everything else comes from the signed results.{" "}
              {content.rerunIds.map((id) => (
                <Link key={id} to={`/studies/${studyId}/reruns/${id}`} className="mr-2">
                  Open the rerun
                </Link>
              ))}
            </p>
            <Preview content={content} images={images} narratives={narratives} canNarrate={canNarrate} result={actionData} busy={busy} />
          </div>
          <Caution />
        </div>
      )}
    </>
  );
}
