import { CAUTION } from "~/shared/caution";

export function Caution({ className = "" }: { className?: string }) {
  return (
    <p className={`text-xs text-ink-soft ${className}`}>
      <span className="font-semibold text-ink">Caution.</span> {CAUTION}
    </p>
  );
}
