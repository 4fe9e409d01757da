/** The Plumbline mark: a plumb bob on its line, and the name. */
export function Logo({ compact = false }: { compact?: boolean }) {
  return (
    <span className="inline-flex items-center gap-2 text-ink">
      <svg width="18" height="22" viewBox="0 0 18 22" aria-hidden="true">
        <line x1="9" y1="0" x2="9" y2="9" stroke="currentColor" strokeWidth="1.5" />
        <path d="M3 9h12l-6 12z" fill="#9a6b1f" />
      </svg>
      {compact ? null : <span className="text-lg font-semibold tracking-tight">Plumbline</span>}
    </span>
  );
}
