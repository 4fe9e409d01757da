/**
 * The diagnostic figures of a sponsor report: pictures rendered on the server
 * (app/.server/reports/report-figures.server.ts), influential subjects by rank only, each with its
 * caption and alt text, one a row so their labels stay legible; each keeps its size while it loads.
 */
export interface ReportFigureData {
  key: string;
  caption: string;
  alt: string;
  src: string | null;
  width: number;
  height: number;
  reason: string | null;
}

export function ReportFigures({ figures }: { figures: readonly ReportFigureData[] }) {
  if (figures.length === 0) return null;
  return (
    <div className="grid gap-4">
      {figures.map((f) => (
        <figure key={f.key} className="panel min-w-0 p-3" data-report-figure={f.key}>
          {f.src ? (
            <img src={f.src} alt={f.alt} width={f.width} height={f.height} className="h-auto w-full" />
          ) : (
            <p className="text-sm text-ink-soft">Not drawn: {f.reason}.</p>
          )}
          <figcaption className="mt-2 text-xs text-ink-soft">{f.caption}</figcaption>
        </figure>
      ))}
    </div>
  );
}
