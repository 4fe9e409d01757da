import { Form, Link } from "react-router";
import { utc } from "~/shared/format";
import { StatusLabel } from "../status";

/** Where a rerun's result comes from: dataset, plan, engine, who started it, its hash and those of reruns of the same inputs. */
export function Provenance({
  studyId,
  rerun,
  dataset,
  planVersion,
  startedBy,
  twins,
  canRerun,
  busy,
}: {
  studyId: string;
  rerun: {
    datasetSha256: string;
    engineVersion: string | null;
    createdAt: string;
    resultSha256: string | null;
  };
  dataset: { name: string; version: number };
  planVersion: { id: string; title: string; version: number };
  startedBy: string | null;
  twins: readonly { id: string; same: boolean; at: string }[];
  canRerun: boolean;
  busy: boolean;
}) {
  return (
    <section className="panel mb-6 grid gap-x-6 gap-y-1 p-4 text-sm md:grid-cols-2" aria-label="Provenance">
      <p>
        <span className="font-semibold text-ink-soft">Dataset </span>
        {dataset.name} v{dataset.version} · SHA-256{" "}
        <span className="font-mono text-xs break-all">{rerun.datasetSha256}</span>
      </p>
      <p>
        <span className="font-semibold text-ink-soft">Plan </span>
        <Link to={`/studies/${studyId}/plans/${planVersion.id}`}>
          {planVersion.title} v{planVersion.version}
        </Link>
      </p>
      <p>
        <span className="font-semibold text-ink-soft">Engine </span>
        {rerun.engineVersion ?? "—"} · <span className="font-semibold text-ink-soft">Started </span>
        {utc(rerun.createdAt)} by {startedBy}
      </p>
      <p>
        <span className="font-semibold text-ink-soft">Result SHA-256 </span>
        <span className="font-mono text-xs break-all">{rerun.resultSha256 ?? "—"}</span>
      </p>
      {twins.length > 0 ? (
        <p className="md:col-span-2">
          {twins.map((tw) => (
            <span key={tw.id} className="mr-3 inline-flex items-center gap-1">
              <StatusLabel
                status={tw.same ? "within" : "finding"}
                word={tw.same ? "Same result hash" : "Different result hash"}
              />
              <Link to={`/studies/${studyId}/reruns/${tw.id}`} className="text-xs">
                rerun of {utc(tw.at)}
              </Link>
            </span>
          ))}
        </p>
      ) : null}
      {canRerun ? (
        <Form method="post" className="md:col-span-2">
          <input type="hidden" name="intent" value="again" />
          <button type="submit" className="btn-quiet mt-2" disabled={busy}>
            Rerun again with the same inputs
          </button>
        </Form>
      ) : null}
    </section>
  );
}
