// Moved to app/shared/format.ts (issue 19 item 3). This re-export keeps the import path of the
// results and appendix routes and rerun-results.tsx, reworked in parallel; import from ~/shared.
export * from "~/shared/format";
