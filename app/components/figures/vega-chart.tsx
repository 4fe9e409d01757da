import { useEffect, useRef, useState } from "react";
import type { Spec } from "vega";
import { drawChart } from "./draw-chart";

/** A compiled Vega specification as it arrives from a loader (serialized, so typed loosely). */
export type VegaSpecJson = object;

/**
 * A chart drawn in the browser only, from a specification compiled to Vega on the server
 * (draw-chart.ts). The frame keeps its height while the chart loads.
 */
export function VegaChart({
  spec,
  height,
  renderer = "svg",
  label,
}: {
  spec: VegaSpecJson;
  height: number;
  renderer?: "svg" | "canvas";
  label: string;
}) {
  const target = useRef<HTMLDivElement>(null);
  const [failed, setFailed] = useState<string | null>(null);
  useEffect(() => {
    let cancelled = false;
    let finalize: (() => void) | undefined;
    if (!target.current) return;
    drawChart(target.current, spec as Spec, renderer)
      .then((remove) => {
        if (cancelled) remove();
        else finalize = remove;
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
      {failed ? (
        <p className="text-sm text-ink-soft">
          The chart could not be drawn ({failed}); the table beside it has the same numbers.
        </p>
      ) : null}
    </div>
  );
}
