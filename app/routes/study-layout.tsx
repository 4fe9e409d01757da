import { NavLink, Outlet } from "react-router";
import type { Route } from "./+types/study-layout";
import { ROLE_LABELS, type StudyAction } from "~/.server/permissions.server";
import { requireStudy } from "~/.server/study-access.server";

/** The workspace sections, each shown only to the roles that may use it. */
const SECTIONS: { path: string; label: string; action: StudyAction }[] = [
  { path: "", label: "Overview", action: "study.view" },
  { path: "datasets", label: "Datasets", action: "dataset.view" },
  { path: "plans", label: "Analysis plans", action: "plan.view" },
  { path: "reruns", label: "Reruns", action: "rerun.view" },
  { path: "deviations", label: "Deviation log", action: "deviation.view" },
  { path: "appendix", label: "Appendix", action: "appendix.export" },
  { path: "reports", label: "Reports", action: "report.view" },
];

export async function loader({ request, params }: Route.LoaderArgs) {
  const { study, role, allowed } = await requireStudy(request, params.studyId, "study.view");
  return {
    study: { id: study.id, code: study.code, title: study.title, sponsor: study.sponsor },
    role: role ? ROLE_LABELS[role] : null,
    sections: SECTIONS.filter((s) => allowed.has(s.action)).map(({ path, label }) => ({ path, label })),
  };
}

export default function StudyLayout({ loaderData }: Route.ComponentProps) {
  const { study, role, sections } = loaderData;
  return (
    <div className="grid gap-8 md:grid-cols-[13rem_1fr]">
      <aside>
        <p className="text-xs font-semibold uppercase tracking-wide text-ink-soft">Study</p>
        <p className="text-lg font-semibold">{study.code}</p>
        <p className="mb-1 text-sm text-ink-soft">{study.sponsor}</p>
        <p className="mb-4 text-xs text-ink-soft">
          Your role: <span className="font-medium text-ink">{role}</span>
        </p>
        <nav aria-label="Study sections">
          <ul className="space-y-0.5 border-l border-rule">
            {sections.map((s) => (
              <li key={s.path}>
                <NavLink
                  to={s.path === "" ? `/studies/${study.id}` : `/studies/${study.id}/${s.path}`}
                  end
                  className={({ isActive }) =>
                    `-ml-px block border-l-2 px-3 py-1.5 text-sm no-underline hover:no-underline ${
                      isActive
                        ? "border-accent font-semibold text-ink"
                        : "border-transparent text-ink-soft hover:text-ink"
                    }`
                  }
                >
                  {s.label}
                </NavLink>
              </li>
            ))}
          </ul>
        </nav>
      </aside>
      <main className="min-w-0">
        <Outlet />
      </main>
    </div>
  );
}
