import { Form, Link, redirect, useNavigation } from "react-router";
import type { Route } from "./+types/study-plans";
import { EmptyState, FieldError, PageHeader } from "~/components/page";
import { actorOf } from "~/.server/people.server";
import { createPlan, listPlans, PlanHeader, STATUS_LABELS } from "~/.server/plans/plans.server";
import { requireStudy } from "~/.server/study-access.server";

export function meta({ loaderData }: Route.MetaArgs) {
  return [{ title: `Analysis plans · ${loaderData?.code ?? "Study"} · Plumbline` }];
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const { study, allowed } = await requireStudy(request, params.studyId, "plan.view");
  const plans = await listPlans(study.id);
  return {
    studyId: study.id,
    code: study.code,
    canAuthor: allowed.has("plan.author"),
    plans: plans.map((p) => ({
      id: p.id,
      name: p.name,
      versions: p.versions.map((v) => ({
        id: v.id,
        version: v.version,
        status: v.status,
        statusLabel: STATUS_LABELS[v.status],
        title: v.title,
        sap: `${v.sapName ?? ""} ${v.sapVersion ?? ""}`.trim(),
        authorName: v.authorName,
        updatedAt: v.updatedAt,
      })),
    })),
  };
}

export async function action({ request, params }: Route.ActionArgs) {
  const { study, user } = await requireStudy(request, params.studyId, "plan.author");
  const parsed = PlanHeader.safeParse(Object.fromEntries(await request.formData()));
  if (!parsed.success) {
    const errors: Record<string, string> = {};
    for (const i of parsed.error.issues) errors[String(i.path[0])] ??= i.message;
    return { errors };
  }
  const { versionId } = await createPlan(actorOf(user), study.id, parsed.data);
  return redirect(`/studies/${study.id}/plans/${versionId}`);
}

export default function Plans({ loaderData, actionData }: Route.ComponentProps) {
  const { plans, canAuthor, code, studyId } = loaderData;
  const errors: Record<string, string> = actionData?.errors ?? {};
  const navigation = useNavigation();
  return (
    <>
      <PageHeader eyebrow={code} title="Analysis plans" />
      <div className="grid gap-6 xl:grid-cols-[1fr_22rem]">
        <section className="space-y-4">
          {plans.length === 0 ? (
            <EmptyState title="No analysis plan yet">
              <p>
                A biostatistician writes the analysis plan here: the planned models of the SAP and, for each,
                the diagnostic checks with their thresholds. A second biostatistician approves it, which
                freezes that version.
              </p>
            </EmptyState>
          ) : (
            plans.map((p) => (
              <article key={p.id} className="panel">
                <h2 className="border-b border-rule px-4 py-2 text-base">{p.name}</h2>
                <table className="data-table">
                  <thead>
                    <tr>
                      <th scope="col">Version</th>
                      <th scope="col">Status</th>
                      <th scope="col">SAP</th>
                      <th scope="col">Author</th>
                      <th scope="col">Last change (UTC)</th>
                    </tr>
                  </thead>
                  <tbody>
                    {p.versions.map((v) => (
                      <tr key={v.id}>
                        <td className="num">
                          <Link to={`/studies/${studyId}/plans/${v.id}`}>Version {v.version}</Link>
                        </td>
                        <td>{v.statusLabel}</td>
                        <td>{v.sap || "—"}</td>
                        <td>{v.authorName ?? "—"}</td>
                        <td className="num">{v.updatedAt.slice(0, 16).replace("T", " ")}</td>
                      </tr>
                    ))}
                  </tbody>
                </table>
              </article>
            ))
          )}
        </section>
        {canAuthor ? (
          <section className="panel p-4">
            <h2 className="mb-3">New analysis plan</h2>
            <Form method="post" className="space-y-3" noValidate>
              {(
                [
                  ["title", "Title", "text", "Efficacy models"],
                  ["sapName", "SAP document", "text", "Statistical analysis plan"],
                  ["sapVersion", "SAP version", "text", "2.0"],
                  ["sapDate", "SAP date", "date", ""],
                ] as const
              ).map(([name, label, type, placeholder]) => (
                <div key={name}>
                  <label htmlFor={`plan-${name}`} className="label">
                    {label}
                  </label>
                  <input
                    id={`plan-${name}`}
                    name={name}
                    type={type}
                    className="field"
                    placeholder={placeholder || undefined}
                    aria-invalid={errors[name] ? true : undefined}
                    aria-describedby={errors[name] ? `plan-${name}-error` : undefined}
                  />
                  <FieldError id={`plan-${name}-error`} message={errors[name]} />
                </div>
              ))}
              <button type="submit" className="btn" disabled={navigation.state === "submitting"}>
                Start the plan
              </button>
            </Form>
          </section>
        ) : null}
      </div>
    </>
  );
}
