import { dbClient } from "~/.server/db/index.server";

/** Liveness and database reachability, for load balancers and the test harness. */
export async function loader() {
  await dbClient.execute("SELECT 1");
  return Response.json({ status: "ok" }, { headers: { "Cache-Control": "no-store" } });
}
