// Moved to app/shared/appendix-content.ts (issue 19 item 3). This re-export keeps the import path
// of the appendix route, reworked in parallel; import from ~/shared.
export * from "~/shared/appendix-content";
