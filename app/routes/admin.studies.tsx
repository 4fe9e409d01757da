import { Form, Link, useNavigation } from "react-router";
import type { Route } from "./+types/admin.studies";
import { FieldError, PageHeader } from "~/components/page";
import { actorOf } from "~/.server/people.server";
import { requireAdmin } from "~/.server/permissions.server";
import { createStudy, listStudiesFor, NewStudy } from "~/.server/studies.server";

export function meta() {
  return [{ title: "Manage studies · Plumbline" }];
}

export async function loader({ request }: Route.LoaderArgs) {
  const admin = await requireAdmin(request, "studies.manage");
  const studies = await listStudiesFor(admin);
  return {
    studies: studies.map((s) => ({
      id: s.id,
      code: s.code,
      title: s.title,
      sponsor: s.sponsor,
      members: s.members,
    })),
  };
}

export async function action({ request }: Route.ActionArgs) {
  const admin = await requireAdmin(request, "studies.manage");
  const form = Object.fromEntries(await request.formData());
  const parsed = NewStudy.safeParse(form);
  if (!parsed.success) {
    const fieldErrors: Record<string, string> = {};
    for (const issue of parsed.error.issues) fieldErrors[String(issue.path[0])] ??= issue.message;
    return { fieldErrors, created: null };
  }
  const result = await createStudy(actorOf(admin), parsed.data);
  if (!result.ok) return { fieldErrors: result.fieldErrors, created: null };
  return {
    fieldErrors: {} as Record<string, string>,
    created: { id: result.study.id, code: result.study.code },
  };
}

const FIELDS = [
  { name: "code", label: "Study code", hint: "As in the protocol, e.g. ABC-301", required: true },
  { name: "title", label: "Title", hint: "The protocol's short title", required: true },
  { name: "sponsor", label: "Sponsor", required: true },
  { name: "compound", label: "Compound", required: false },
  { name: "indication", label: "Indication", required: false },
  { name: "phase", label: "Phase", hint: "e.g. 3", required: false },
] as const;

export default function AdminStudies({ loaderData, actionData }: Route.ComponentProps) {
  const navigation = useNavigation();
  const errors = actionData?.fieldErrors ?? {};
  return (
    <main>
      <PageHeader eyebrow="Administration" title="Manage studies" />
      <div className="grid gap-8 lg:grid-cols-[1fr_22rem]">
        <section>
          <table className="data-table panel">
            <thead>
              <tr>
                <th scope="col">Study</th>
                <th scope="col">Title</th>
                <th scope="col">Sponsor</th>
                <th scope="col" className="text-right">
                  People
                </th>
              </tr>
            </thead>
            <tbody>
              {loaderData.studies.map((s) => (
                <tr key={s.id}>
                  <td className="font-semibold">{s.code}</td>
                  <td>{s.title}</td>
                  <td>{s.sponsor}</td>
                  <td className="num text-right">{s.members}</td>
                </tr>
              ))}
              {loaderData.studies.length === 0 ? (
                <tr>
                  <td colSpan={4} className="text-ink-soft">
                    No studies yet. Create the first one with the form.
                  </td>
                </tr>
              ) : null}
            </tbody>
          </table>
        </section>
        <section className="panel p-4">
          <h2 className="mb-3">New study</h2>
          {actionData?.created ? (
            <p className="mb-3 text-sm" role="status">
              Study {actionData.created.code} created. Give people their roles on{" "}
              <Link to="/admin/people">People and roles</Link>.
            </p>
          ) : null}
          <Form method="post" className="space-y-3" noValidate>
            {FIELDS.map((f) => (
              <div key={f.name}>
                <label htmlFor={f.name} className="label">
                  {f.label}
                  {f.required ? null : <span className="font-normal normal-case"> (optional)</span>}
                </label>
                <input
                  id={f.name}
                  name={f.name}
                  className="field"
                  required={f.required}
                  aria-invalid={errors[f.name] ? true : undefined}
                  aria-describedby={errors[f.name] ? `${f.name}-error` : undefined}
                  placeholder={"hint" in f ? f.hint : undefined}
                />
                <FieldError id={`${f.name}-error`} message={errors[f.name]} />
              </div>
            ))}
            <button type="submit" className="btn" disabled={navigation.state === "submitting"}>
              Create study
            </button>
          </Form>
        </section>
      </div>
    </main>
  );
}
