/** The caution every results screen, export and API answer carries. */
export const CAUTION = "Results support, but do not replace, qualified statistical and medical review.";

export function Caution({ className = "" }: { className?: string }) {
  return (
    <p className={`text-xs text-ink-soft ${className}`}>
      <span className="font-semibold text-ink">Caution.</span> {CAUTION}
    </p>
  );
}
