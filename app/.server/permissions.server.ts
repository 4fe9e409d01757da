/**
 * The single place that says who may do what. Every loader, action and resource route asks
 * here, on the server; anything not granted below is refused (deny by default).
 *
 * Study actions are granted to study roles; administration actions to global administrators.
 * Administrators manage studies, people and API clients and read the audit trail, but they do
 * not get study roles by being administrators: they change no data, plans or results.
 */
import { data } from "react-router";
import { STUDY_ROLES, type StudyRole } from "./db/schema";
import { studyRoleOf } from "./people.server";
import { requireUser, type CurrentUser } from "./session.server";

export { STUDY_ROLES, type StudyRole };

export const ROLE_LABELS: Record<StudyRole, string> = {
  data_manager: "Data manager",
  biostatistician: "Biostatistician",
  medical_writer: "Medical writer",
  sponsor_reader: "Sponsor reader",
};

/** What can be done inside one study, and which study roles may do it. */
export const STUDY_PERMISSIONS = {
  "study.view": ["data_manager", "biostatistician", "medical_writer", "sponsor_reader"],
  "dataset.view": ["data_manager", "biostatistician"],
  "dataset.rows": ["data_manager", "biostatistician"],
  "dataset.upload": ["data_manager"],
  "dataset.screen": ["data_manager"],
  "dataset.lock": ["data_manager"],
  "dataset.purge": ["data_manager"],
  "plan.view": ["biostatistician", "medical_writer"],
  "plan.author": ["biostatistician"],
  "plan.approve": ["biostatistician"],
  "rerun.view": ["biostatistician", "medical_writer"],
  "rerun.start": ["biostatistician"],
  "finding.assess": ["biostatistician"],
  "rerun.sign": ["biostatistician"],
  "deviation.view": ["biostatistician", "medical_writer"],
  "appendix.narrate": ["medical_writer"],
  "appendix.export": ["medical_writer"],
  "report.view": ["biostatistician", "medical_writer", "sponsor_reader"],
} as const satisfies Record<string, readonly StudyRole[]>;

export type StudyAction = keyof typeof STUDY_PERMISSIONS;

/** What only a global administrator may do. */
export const ADMIN_ACTIONS = [
  "studies.manage",
  "people.manage",
  "audit.read",
  "apiClients.manage",
  "outbox.read",
] as const;
export type AdminAction = (typeof ADMIN_ACTIONS)[number];

const ACTION_LABELS: Record<StudyAction | AdminAction, string> = {
  "study.view": "open this study",
  "dataset.view": "see this study's datasets",
  "dataset.rows": "see subject-level rows",
  "dataset.upload": "upload datasets",
  "dataset.screen": "resolve the identifier screen",
  "dataset.lock": "lock a dataset version",
  "dataset.purge": "purge superseded dataset versions",
  "plan.view": "read analysis plans",
  "plan.author": "write analysis plans",
  "plan.approve": "approve analysis plans",
  "rerun.view": "read reruns",
  "rerun.start": "start reruns",
  "finding.assess": "assess findings",
  "rerun.sign": "sign reruns",
  "deviation.view": "read the deviation log",
  "appendix.narrate": "write the appendix narrative",
  "appendix.export": "export the Word appendix",
  "report.view": "read published reports",
  "studies.manage": "manage studies",
  "people.manage": "manage people and their study roles",
  "audit.read": "read the audit trail",
  "apiClients.manage": "manage API clients",
  "outbox.read": "read the e-mail outbox",
};

export function roleMay(role: StudyRole | null, action: StudyAction): boolean {
  return role !== null && (STUDY_PERMISSIONS[action] as readonly StudyRole[]).includes(role);
}

/**
 * The one decision on subject-level data: whether a person with this study access may see
 * subject ids and subject-level rows. True only for roles with `dataset.rows`; every page,
 * figure answer, export, e-mail and API answer asks here and redacts through
 * redaction.server.ts otherwise.
 */
export function seesSubjects(access: { role: StudyRole | null }): boolean {
  return roleMay(access.role, "dataset.rows");
}

/** The study actions a role may take, for navigation that shows each role only what it may use. */
export function allowedActions(role: StudyRole | null): Set<StudyAction> {
  return new Set((Object.keys(STUDY_PERMISSIONS) as StudyAction[]).filter((a) => roleMay(role, a)));
}

export interface Forbidden {
  reason: "forbidden";
  action: string;
  /** Human sentence naming the role needed. */
  message: string;
}

function forbidden(action: StudyAction | AdminAction, needed: string): never {
  const body: Forbidden = {
    reason: "forbidden",
    action,
    message: `To ${ACTION_LABELS[action]} you need ${needed}. Ask a Plumbline administrator if you should have it.`,
  };
  throw data(body, { status: 403 });
}

function neededRoles(action: StudyAction): string {
  const names = (STUDY_PERMISSIONS[action] as readonly StudyRole[]).map((r) => ROLE_LABELS[r].toLowerCase());
  const list =
    names.length === 1 ? names[0] : `${names.slice(0, -1).join(", ")} or ${names[names.length - 1]}`;
  return `the ${list} role on this study`;
}

export interface StudyAccess {
  user: CurrentUser;
  role: StudyRole | null;
  allowed: Set<StudyAction>;
}

/**
 * The study permission check for a person known other than by a browser session (an API
 * token acts for its person): the same rule, from the same table, never more. Throws a 403
 * naming the needed role.
 */
export async function requirePersonStudyPermission(
  person: { id: string },
  studyId: string,
  action: StudyAction,
): Promise<{ role: StudyRole | null; allowed: Set<StudyAction> }> {
  return requireRolePermits(await studyRoleOf(person.id, studyId), action);
}

/**
 * The same check for a role already read with `studyRoleOf` (the guard reads it once per
 * request for all of a page's loaders): throws a 403 naming the needed role.
 */
export function requireRolePermits(
  role: StudyRole | null,
  action: StudyAction,
): { role: StudyRole | null; allowed: Set<StudyAction> } {
  if (!roleMay(role, action)) forbidden(action, neededRoles(action));
  return { role, allowed: allowedActions(role) };
}

export async function requireAdmin(request: Request, action: AdminAction): Promise<CurrentUser> {
  const user = await requireUser(request);
  if (!user.isAdmin) forbidden(action, "the administrator role");
  return user;
}
