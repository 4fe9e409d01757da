// Tolerance checks shared by the reference tests.
import { expect } from "vitest";

/**
 * Relative agreement |a − b| ≤ tol · max(|b|, floor). `floor` keeps values that are zero in exact
 * arithmetic (a residual of 1e-15) from demanding more digits than the data carry.
 */
export function expectClose(
  actual: number | null | undefined,
  expected: number | null | undefined,
  tol: number,
  label: string,
  floor = 0,
): void {
  if (expected === null || expected === undefined || Number.isNaN(expected)) {
    expect(
      actual === null || actual === undefined || Number.isNaN(actual),
      `${label}: expected no value, got ${actual}`,
    ).toBe(true);
    return;
  }
  expect(
    typeof actual === "number" && Number.isFinite(actual),
    `${label}: expected ${expected}, got ${actual}`,
  ).toBe(true);
  const a = actual as number;
  const scale = Math.max(Math.abs(expected), floor);
  const err = Math.abs(a - expected);
  expect(
    err <= tol * scale || err === 0,
    `${label}: ${a} vs R ${expected} (relative error ${(err / scale).toExponential(2)}, tolerance ${tol})`,
  ).toBe(true);
}

/** Elementwise agreement of two arrays; the floor is `floorFraction` (default 1e-4) of the array's largest magnitude. */
export function expectAllClose(
  actual: readonly (number | null)[],
  expected: readonly (number | null)[],
  tol: number,
  label: string,
  floorFraction = 1e-4,
): void {
  expect(actual.length, `${label}: length`).toBe(expected.length);
  let maxAbs = 0;
  for (const v of expected) if (v !== null && Number.isFinite(v)) maxAbs = Math.max(maxAbs, Math.abs(v));
  expected.forEach((e, i) => expectClose(actual[i], e, tol, `${label}[${i}]`, maxAbs * floorFraction));
}

/**
 * Plumbline's name for a coefficient R calls `rName`: R pastes a factor's name and level
 * ("woolB") and joins interaction parts with ":" ("woolB:tensionH"); Plumbline writes
 * "wool: B × tension: H" (app/engine/coefficient-names.ts). `variables` are the model's
 * main-term variables; the longest that starts a part (and is shorter than it) is the factor.
 */
export function ourCoefficientName(rName: string, variables: readonly string[]): string {
  if (rName === "(Intercept)") return "Intercept";
  const byLength = [...variables].sort((a, b) => b.length - a.length);
  return rName
    .split(":")
    .map((part) => {
      const factor = byLength.find((f) => part.startsWith(f) && part.length > f.length);
      return factor ? `${factor}: ${part.slice(factor.length)}` : part;
    })
    .join(" × ");
}
