/**
 * A route's head start (app/components/head-start.ts): what the results page starts before the
 * stylesheet. Only a handle with `headStart` and a match with loader data start anything (an error
 * page has no data). No outside source: the rule is the code's own.
 */
import { describe, expect, it } from "vitest";
import { headStartOf } from "~/components/head-start";

describe("a route's head start", () => {
  const handle = { headStart: (data: unknown) => `started with ${JSON.stringify(data)}` };

  it("gives what the handle starts, from the route's data", () => {
    expect(headStartOf(handle, { rerun: "r1" })).toBe('started with {"rerun":"r1"}');
  });

  it("starts nothing without such a handle or without data", () => {
    expect(headStartOf(undefined, { rerun: "r1" })).toBeNull();
    expect(headStartOf({ breadcrumb: "Reruns" }, { rerun: "r1" })).toBeNull();
    expect(headStartOf(handle, undefined)).toBeNull();
  });
});
