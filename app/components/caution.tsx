import { CAUTION } from "~/shared/caution";

// The text lives in app/shared/caution.ts; re-exported for the results route, reworked in parallel.
export { CAUTION };

export function Caution({ className = "" }: { className?: string }) {
  return (
    <p className={`text-xs text-ink-soft ${className}`}>
      <span className="font-semibold text-ink">Caution.</span> {CAUTION}
    </p>
  );
}
