import type { Route } from "./+types/study-overview";
import { PageHeader } from "~/components/page";
import { listStudyTeam } from "~/.server/people.server";
import { ROLE_LABELS, type StudyRole } from "~/.server/permissions.server";
import { requireStudy } from "~/.server/study-access.server";

export function meta({ loaderData }: Route.MetaArgs) {
  return [{ title: `${loaderData?.study.code ?? "Study"} · Plumbline` }];
}

/** What each role does in a study, in the words of the people who hold it. */
const ROLE_DUTIES: Record<StudyRole, string> = {
  data_manager:
    "Load the locked, de-identified analysis datasets, resolve the identifier screen and lock each version.",
  biostatistician:
    "Write and approve the analysis plan, rerun its planned models on the locked data, assess every finding and sign reruns.",
  medical_writer:
    "Read signed reruns, write the appendix narrative and export the Word appendix for the clinical study report.",
  sponsor_reader: "Read the signed, published reports and appendices of this study.",
};

export async function loader({ request, params }: Route.LoaderArgs) {
  const { study, role } = await requireStudy(request, params.studyId, "study.view");
  const team = await listStudyTeam(study.id);
  return {
    study,
    duty: role ? ROLE_DUTIES[role] : null,
    team: team.map((m) => ({ ...m, roleLabel: ROLE_LABELS[m.role] })),
  };
}

export default function StudyOverview({ loaderData }: Route.ComponentProps) {
  const { study, duty, team } = loaderData;
  const facts: [string, string | null][] = [
    ["Sponsor", study.sponsor],
    ["Compound", study.compound],
    ["Indication", study.indication],
    ["Phase", study.phase],
  ];
  return (
    <>
      <PageHeader eyebrow="Study overview" title={study.code} />
      <p className="-mt-2 mb-6 max-w-4xl text-base text-ink-soft">{study.title}</p>
      <div className="grid gap-6 lg:grid-cols-[1fr_20rem]">
        <section className="space-y-4">
          {duty ? (
            <div className="panel p-4">
              <h2 className="mb-1 text-base">Your part in this study</h2>
              <p className="text-sm">{duty}</p>
            </div>
          ) : null}
          <dl className="panel grid grid-cols-[8rem_1fr] gap-x-4 gap-y-2 p-4 text-sm">
            {facts.map(([k, v]) => (
              <div key={k} className="contents">
                <dt className="font-semibold text-ink-soft">{k}</dt>
                <dd>{v ?? "—"}</dd>
              </div>
            ))}
          </dl>
        </section>
        <section className="panel p-4">
          <h2 className="mb-3 text-base">Study team</h2>
          {team.length === 0 ? (
            <p className="text-sm text-ink-soft">No one holds a role yet.</p>
          ) : (
            <ul className="space-y-2 text-sm">
              {team.map((m) => (
                <li key={`${m.displayName}-${m.role}`} className="flex justify-between gap-2">
                  <span>{m.displayName}</span>
                  <span className="text-ink-soft">{m.roleLabel}</span>
                </li>
              ))}
            </ul>
          )}
        </section>
      </div>
    </>
  );
}
