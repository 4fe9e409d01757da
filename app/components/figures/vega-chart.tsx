import { useEffect, useRef, useState } from "react";
import type { TopLevelSpec } from "vega-lite";

/**
 * A Vega-Lite chart drawn in the browser only: vega-embed is imported lazily when the component
 * mounts, expressions run through Vega's interpreter (no eval, so the page's CSP holds). The
 * frame keeps its height while the chart loads.
 */
export function VegaChart({ spec, height, renderer = "svg", label }: { spec: TopLevelSpec; height: number; renderer?: "svg" | "canvas"; label: string }) {
  const target = useRef<HTMLDivElement>(null);
  const [failed, setFailed] = useState<string | null>(null);
  useEffect(() => {
    let cancelled = false;
    let finalize: (() => void) | undefined;
    import("vega-embed")
      .then(async ({ default: embed }) => {
        if (cancelled || !target.current) return;
        const result = await embed(target.current, spec, { actions: false, ast: true, renderer, tooltip: { theme: "light" } });
        if (cancelled) result.finalize();
        else finalize = result.finalize;
      })
      .catch((e: unknown) => {
        if (!cancelled) setFailed(e instanceof Error ? e.message : "unknown error");
      });
    return () => {
      cancelled = true;
      finalize?.();
    };
  }, [spec, renderer]);
  return (
    <div className="relative w-full" style={{ minHeight: height }} role="img" aria-label={label}>
      <div ref={target} className="w-full" />
      {failed ? <p className="text-sm text-ink-soft">The chart could not be drawn ({failed}); the table beside it has the same numbers.</p> : null}
    </div>
  );
}
