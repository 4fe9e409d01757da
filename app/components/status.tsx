/**
 * Status is never colour alone: each carries a word and a shape (filled square within plan,
 * open triangle finding, open circle pending).
 */
import { CHECK_OUTCOME, type Status } from "~/shared/status-words";

export type { Status };

const LOOK: Record<Status, { word: string; color: string }> = {
  within: { word: CHECK_OUTCOME.within.word, color: "#2e6f5e" },
  finding: { word: CHECK_OUTCOME.finding.word, color: "#b4442a" },
  pending: { word: "Pending", color: "#5b6478" },
};

export function StatusShape({ status, size = 12 }: { status: Status; size?: number }) {
  const { color } = LOOK[status];
  return (
    <svg width={size} height={size} viewBox="0 0 12 12" aria-hidden="true" className="shrink-0">
      {status === "within" ? <rect x="1" y="1" width="10" height="10" fill={color} /> : null}
      {status === "finding" ? (
        <path d="M6 1.2 11 10.8H1z" fill="none" stroke={color} strokeWidth="1.6" />
      ) : null}
      {status === "pending" ? (
        <circle cx="6" cy="6" r="4.6" fill="none" stroke={color} strokeWidth="1.6" />
      ) : null}
    </svg>
  );
}

export function StatusLabel({ status, word }: { status: Status; word?: string }) {
  const look = LOOK[status];
  return (
    <span className="inline-flex items-center gap-1.5 text-sm font-medium" style={{ color: look.color }}>
      <StatusShape status={status} />
      {word ?? look.word}
    </span>
  );
}
