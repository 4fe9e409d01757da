export interface ForestRow {
  label: string;
  estimate: number;
  lower: number;
  upper: number;
  prespecified: boolean;
  primary: boolean;
}

/** The treatment estimate with its CI across analyses (placeholder until the charts land). */
export function SensitivityForest({ rows, contrastLabel }: { rows: ForestRow[]; contrastLabel: string }) {
  return <div className="text-xs text-ink-soft" data-rows={rows.length} data-contrast={contrastLabel} />;
}
