import type { ReactNode } from "react";

export function PageHeader({
  title,
  eyebrow,
  children,
}: {
  title: string;
  eyebrow?: string;
  children?: ReactNode;
}) {
  return (
    <header className="mb-6 flex flex-wrap items-end justify-between gap-4 border-b border-rule pb-4">
      <div>
        {eyebrow ? (
          <p className="text-xs font-semibold uppercase tracking-wide text-ink-soft">{eyebrow}</p>
        ) : null}
        <h1>{title}</h1>
      </div>
      {children ? <div className="flex items-center gap-2">{children}</div> : null}
    </header>
  );
}

/** What an empty page says: what is missing, and who does what next. */
export function EmptyState({ title, children }: { title: string; children: ReactNode }) {
  return (
    <section className="panel px-6 py-8">
      <h2 className="mb-2">{title}</h2>
      <div className="max-w-prose space-y-2 text-sm text-ink-soft">{children}</div>
    </section>
  );
}

export function FieldError({ id, message }: { id: string; message?: string }) {
  if (!message) return null;
  return (
    <p id={id} className="mt-1 text-xs font-medium text-finding" role="alert">
      {message}
    </p>
  );
}
