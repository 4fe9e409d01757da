import { Form } from "react-router";
import { utc } from "~/shared/format";

/** Which signed reruns the appendix covers, the export button, and the export's answer. */
export function ChooseAndExport({
  signed,
  planVersions,
  selected,
  exportScope,
  result,
  downloadHref,
  busy,
  exporting,
}: {
  signed: readonly { id: string; modelTitle: string; planVersion: number; signedAt: string }[];
  planVersions: readonly { id: string; version: number; count: number }[];
  selected: string;
  exportScope: { kind: "rerun" | "plan_version"; id: string };
  result:
    { ok: boolean; message: string; section?: string; exported?: { id: string; sha256: string } } | undefined;
  downloadHref: (id: string) => string;
  busy: boolean;
  exporting: boolean;
}) {
  return (
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
        <input type="hidden" name="scope" value={exportScope.kind} />
        <input type="hidden" name="id" value={exportScope.id} />
        <button type="submit" className="btn" disabled={busy}>
          {exporting ? "Exporting…" : "Export the Word appendix"}
        </button>
      </Form>
      {result?.exported ? (
        <p role="status" className="text-sm">
          Exported.{" "}
          <a href={downloadHref(result.exported.id)} download>
            Download the .docx
          </a>{" "}
          <span className="num block break-all text-xs text-ink-soft">SHA-256 {result.exported.sha256}</span>
        </p>
      ) : result && !result.ok && !result.section && result.message ? (
        <p role="alert" className="text-sm text-finding">
          {result.message}
        </p>
      ) : null}
    </section>
  );
}
