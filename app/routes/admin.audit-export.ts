import type { Route } from "./+types/admin.audit-export";
import { CAUTION } from "~/shared/caution";
import { exportAuditCsv, readAuditQuery } from "~/.server/audit-trail.server";
import { actorOf } from "~/.server/people.server";
import { requireAdmin } from "~/.server/permissions.server";

/**
 * The audit trail (the page's filters, every page) as CSV with each event's chain hash and keyed
 * hash; only for those who may read the audit trail. The export is itself audited.
 */
export async function loader({ request }: Route.LoaderArgs) {
  const admin = await requireAdmin(request, "audit.read");
  const out = await exportAuditCsv(actorOf(admin), readAuditQuery(new URL(request.url)));
  return new Response(out.csv, {
    headers: {
      "Content-Type": "text/csv; charset=utf-8; header=present",
      "Content-Disposition": `attachment; filename="${out.fileName}"`,
      "Cache-Control": "private, no-store",
      "X-Content-SHA256": out.sha256,
      "X-Caution": CAUTION,
    },
  });
}
