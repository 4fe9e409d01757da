import type { ReactNode } from "react";

/**
 * A wide table scrolls sideways inside its card instead of overflowing it (on a phone). The
 * region is focusable so keyboard users can scroll it, and named so screen readers announce it.
 */
export function TableScroll({
  label,
  children,
  className = "",
}: {
  label: string;
  children: ReactNode;
  className?: string;
}) {
  return (
    <div
      role="region"
      aria-label={label}
      tabIndex={0}
      className={`relative max-w-full overflow-x-auto focus-visible:outline-2 focus-visible:outline-accent ${className}`}
    >
      {children}
    </div>
  );
}
