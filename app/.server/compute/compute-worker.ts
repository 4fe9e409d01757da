/**
 * The entry of a compute thread (tinypool runs one named export per task). Built with esbuild
 * beside the server build (`scripts/build-workers.mjs`, part of `npm run build`); imports
 * nothing that opens the database.
 */
export { rerunTask as rerun } from "./rerun-task";
export { renderDocx as appendix } from "../appendix/docx.server";
export { whatIfTask as whatIf } from "./what-if-task";
export { uploadTask as upload } from "./upload-task";
