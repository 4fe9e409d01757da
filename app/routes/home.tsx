import { Link } from "react-router";
import type { Route } from "./+types/home";
import { EmptyState, PageHeader } from "~/components/page";
import { ROLE_LABELS } from "~/.server/permissions.server";
import { requireUser } from "~/.server/session.server";
import { listStudiesFor } from "~/.server/studies.server";

export function meta() {
  return [{ title: "Studies · Plumbline" }];
}

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireUser(request);
  const studies = await listStudiesFor(user);
  return {
    isAdmin: user.isAdmin,
    /** Sponsor readers see the studies shared with their organisation, not studies they were added to. */
    sponsorOrganisation: user.identitySource === "oidc" ? (user.organisation ?? "your organisation") : null,
    firstName: user.displayName.split(" ")[0],
    studies: studies.map((s) => ({
      id: s.id,
      code: s.code,
      title: s.title,
      sponsor: s.sponsor,
      phase: s.phase,
      members: s.members,
      role: s.role ? ROLE_LABELS[s.role] : null,
    })),
  };
}

export default function Home({ loaderData }: Route.ComponentProps) {
  const { studies, isAdmin, firstName, sponsorOrganisation } = loaderData;
  return (
    <main>
      <PageHeader eyebrow={`Signed in as ${firstName}`} title="Studies">
        {isAdmin ? (
          <Link to="/admin/studies" className="btn no-underline hover:no-underline">
            New study
          </Link>
        ) : null}
      </PageHeader>
      {studies.length === 0 ? (
        <EmptyState title="You have no studies yet">
          {isAdmin ? (
            <p>
              Create a study on <Link to="/admin/studies">Manage studies</Link>, then give people their roles
              on <Link to="/admin/people">People and roles</Link>.
            </p>
          ) : sponsorOrganisation ? (
            <p>
              No study is shared with {sponsorOrganisation} yet. When a study team shares a study with your
              organisation, its published reports appear here.
            </p>
          ) : (
            <p>
              Nobody has given you a role on a study yet. Ask your Plumbline administrator to add you to the
              study you work on, with the role you hold there.
            </p>
          )}
        </EmptyState>
      ) : (
        <table className="data-table panel">
          <thead>
            <tr>
              <th scope="col">Study</th>
              <th scope="col">Title</th>
              <th scope="col">Sponsor</th>
              <th scope="col">Phase</th>
              <th scope="col">Your role</th>
              <th scope="col" className="text-right">
                People
              </th>
            </tr>
          </thead>
          <tbody>
            {studies.map((s) => (
              <tr key={s.id}>
                <td className="font-semibold whitespace-nowrap">
                  {s.role ? <Link to={`/studies/${s.id}`}>{s.code}</Link> : s.code}
                </td>
                <td>{s.title}</td>
                <td>{s.sponsor}</td>
                <td>{s.phase ?? "—"}</td>
                <td>{s.role ?? <span className="text-ink-soft">No study role (administrator)</span>}</td>
                <td className="num text-right">{s.members}</td>
              </tr>
            ))}
          </tbody>
        </table>
      )}
    </main>
  );
}
