// Moved to app/shared/assessment-terms.ts (issue 19 item 3). This re-export keeps the import path
// of the results route, reworked in parallel; import from ~/shared.
export * from "~/shared/assessment-terms";
