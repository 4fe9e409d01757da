import { StatusLabel } from "~/components/status";

/** A version's state in words and shape (never colour alone). */
export function VersionStatus({
  status,
  unresolved,
  purged = false,
}: {
  status: "draft" | "locked" | "superseded";
  unresolved: number;
  purged?: boolean;
}) {
  if (status === "locked") return <StatusLabel status="within" word="Locked" />;
  if (purged) return <StatusLabel status="pending" word="Superseded · purged" />;
  if (status === "superseded") return <StatusLabel status="pending" word="Superseded" />;
  return unresolved > 0 ? (
    <StatusLabel status="finding" word={`Draft · ${unresolved} to screen`} />
  ) : (
    <StatusLabel status="pending" word="Draft · ready to lock" />
  );
}
