import { data, useFetcher } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/admin.people";
import { PageHeader } from "~/components/page";
import {
  actorOf,
  listMemberships,
  listPeople,
  RoleChangeRefused,
  setStudyRole,
} from "~/.server/people.server";
import { requireAdmin, ROLE_LABELS, STUDY_ROLES } from "~/.server/permissions.server";
import { listStudiesFor } from "~/.server/studies.server";

export function meta() {
  return [{ title: "People and roles · Plumbline" }];
}

export async function loader({ request }: Route.LoaderArgs) {
  const admin = await requireAdmin(request, "people.manage");
  const [people, studies, memberships] = await Promise.all([
    listPeople(),
    listStudiesFor(admin),
    listMemberships(),
  ]);
  const roleOf: Record<string, string> = {};
  for (const m of memberships) roleOf[`${m.personId}:${m.studyId}`] = m.role;
  return {
    people: people.map((p) => ({
      id: p.id,
      displayName: p.displayName,
      email: p.email,
      organisation: p.organisation,
      isAdmin: p.isAdmin,
      lastSignInAt: p.lastSignInAt,
    })),
    studies: studies.map((s) => ({ id: s.id, code: s.code })),
    roleOf,
    roles: STUDY_ROLES.map((r) => ({ value: r, label: ROLE_LABELS[r] })),
  };
}

const SetRole = z.object({
  personId: z.string().min(1),
  studyId: z.string().min(1),
  role: z.union([z.enum(STUDY_ROLES), z.literal("")]),
});

export async function action({ request }: Route.ActionArgs) {
  const admin = await requireAdmin(request, "people.manage");
  const parsed = SetRole.safeParse(Object.fromEntries(await request.formData()));
  if (!parsed.success)
    return data({ ok: false as const, message: "Choose a person, a study and a role." }, { status: 400 });
  const { personId, studyId, role } = parsed.data;
  try {
    await setStudyRole(actorOf(admin), studyId, personId, role === "" ? null : role);
  } catch (e) {
    if (e instanceof RoleChangeRefused)
      return data({ ok: false as const, message: e.message }, { status: e.status });
    throw e;
  }
  return { ok: true as const, message: "Saved." };
}

type Data = Route.ComponentProps["loaderData"];

function RoleCell({
  person,
  study,
  current,
  roles,
}: {
  person: Data["people"][number];
  study: Data["studies"][number];
  current: string;
  roles: Data["roles"];
}) {
  const fetcher = useFetcher<typeof action>();
  const id = `role-${person.id}-${study.id}`;
  const busy = fetcher.state !== "idle";
  return (
    <fetcher.Form method="post" className="flex items-center gap-1.5">
      <input type="hidden" name="personId" value={person.id} />
      <input type="hidden" name="studyId" value={study.id} />
      <label htmlFor={id} className="sr-only">
        Role of {person.displayName} on {study.code}
      </label>
      <select id={id} name="role" defaultValue={current} className="field w-auto py-1">
        <option value="">No role</option>
        {roles.map((r) => (
          <option key={r.value} value={r.value}>
            {r.label}
          </option>
        ))}
      </select>
      <button
        type="submit"
        className="btn-quiet py-1"
        disabled={busy}
        aria-label={`Save role of ${person.displayName} on ${study.code}`}
      >
        {busy ? "Saving" : "Save"}
      </button>
      <span className="w-12 text-xs text-within" role="status">
        {fetcher.state === "idle" && fetcher.data?.ok ? "Saved" : ""}
      </span>
      {fetcher.state === "idle" && fetcher.data && !fetcher.data.ok ? (
        <span className="max-w-56 text-xs text-finding" role="alert">
          {fetcher.data.message}
        </span>
      ) : null}
    </fetcher.Form>
  );
}

export default function AdminPeople({ loaderData }: Route.ComponentProps) {
  const { people, studies, roleOf, roles } = loaderData;
  return (
    <main>
      <PageHeader eyebrow="Administration" title="People and roles" />
      <p className="mb-4 max-w-prose text-sm text-ink-soft">
        People appear here after their first sign-in. Roles are per study: choose one for each study a person
        works on. The administrator flag comes from the identity provider's groups and cannot be set here.
        Nobody gives themselves a role: another administrator grants yours.
      </p>
      <div className="overflow-x-auto">
        <table className="data-table panel">
          <thead>
            <tr>
              <th scope="col">Person</th>
              <th scope="col">Organisation</th>
              <th scope="col">Last sign-in (UTC)</th>
              {studies.map((s) => (
                <th key={s.id} scope="col">
                  Role on {s.code}
                </th>
              ))}
            </tr>
          </thead>
          <tbody>
            {people.map((p) => (
              <tr key={p.id}>
                <td>
                  <div className="font-medium">
                    {p.displayName}
                    {p.isAdmin ? (
                      <span className="ml-1 text-xs font-normal text-ink-soft">administrator</span>
                    ) : null}
                  </div>
                  <div className="text-xs text-ink-soft">{p.email}</div>
                </td>
                <td>{p.organisation ?? "—"}</td>
                <td className="num whitespace-nowrap">
                  {p.lastSignInAt ? p.lastSignInAt.slice(0, 16).replace("T", " ") : "never"}
                </td>
                {studies.map((s) => (
                  <td key={s.id}>
                    <RoleCell person={p} study={s} current={roleOf[`${p.id}:${s.id}`] ?? ""} roles={roles} />
                  </td>
                ))}
              </tr>
            ))}
          </tbody>
        </table>
      </div>
    </main>
  );
}
