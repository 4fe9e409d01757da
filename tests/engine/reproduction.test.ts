/**
 * The reproduction check's rounding rule, on worked cases: half away from zero at the printed
 * decimals, on the rerun's value read to 15 significant digits, and printed p bounds. Each case
 * is decimal arithmetic worked by hand. (R's round() goes half to even, as its help page says,
 * and formatting functions round the binary value, so they differ from this rule on half-way
 * cases such as 2.5 and 1.005.)
 */
import { describe, expect, it } from "vitest";
import { compareToPrinted, parsePrinted, roundHalfAwayFromZero } from "~/engine/reproduction";
import { publishedValueSchema } from "~/engine/published-values";

describe("rounding half away from zero", () => {
  it.each([
    // value, decimals, expected: worked by hand
    [2.344, 2, "2.34"],
    [2.346, 2, "2.35"],
    [2.345, 2, "2.35"], // half-way: away from zero (the double is 2.34500000000000019984…)
    [-2.345, 2, "-2.35"], // half-way, negative: away from zero, not up
    [1.005, 2, "1.01"], // half-way: the double is 1.00499999999999989342…, (1.005).toFixed(2) gives "1.00"
    [0.125, 2, "0.13"], // exactly representable half-way
    [-0.125, 2, "-0.13"],
    [0.5, 0, "1"],
    [-0.5, 0, "-1"],
    [2.5, 0, "3"], // not to even (R's round(2.5) is 2)
    [-0.004, 2, "0.00"], // no "-0.00"
    [0.0004999, 3, "0.000"],
    [0.0005, 3, "0.001"],
    [12345.6789, 1, "12345.7"],
    [3, 3, "3.000"],
    [1e-20, 4, "0.0000"],
    [0.1 + 0.2, 16, "0.3000000000000000"], // 15 significant digits: 0.30000000000000004 reads as 0.3
  ] as const)("%s to %i decimals is %s", (x, d, want) => {
    expect(roundHalfAwayFromZero(x, d)).toBe(want);
  });
});

describe("printed numbers", () => {
  it.each([
    ["-2.35", { bound: null, number: "-2.35", decimals: 2 }],
    ["−2.35", { bound: null, number: "-2.35", decimals: 2 }], // typographic minus
    [".041", { bound: null, number: "0.041", decimals: 3 }],
    ["<0.001", { bound: "<", number: "0.001", decimals: 3 }],
    ["< .001", { bound: "<", number: "0.001", decimals: 3 }],
    ["> 0.999", { bound: ">", number: "0.999", decimals: 3 }],
    ["12", { bound: null, number: "12", decimals: 0 }],
  ] as const)("%s", (text, want) => {
    expect(parsePrinted(text)).toEqual(want);
  });

  it.each(["", "abc", "1,5", "1e-5", "--1", "p=0.04", "."])("refuses %j", (text) => {
    expect(parsePrinted(text)).toBeNull();
    expect(
      publishedValueSchema.safeParse({ quantity: "contrast", level: "A", statistic: "p", value: text })
        .success,
    ).toBe(false);
  });

  it("allows a bound only for a p-value", () => {
    const r = publishedValueSchema.safeParse({
      quantity: "contrast",
      level: "A",
      statistic: "estimate",
      value: "<0.001",
    });
    expect(r.success).toBe(false);
    expect(r.error?.issues[0].message).toMatch(/Only a p-value may be printed as a bound/);
    expect(
      publishedValueSchema.safeParse({ quantity: "contrast", level: "A", statistic: "p", value: "<0.001" })
        .success,
    ).toBe(true);
  });
});

describe("a printed value against the rerun's", () => {
  it("reproduces at the printed decimals and names the rounding on a mismatch", () => {
    expect(compareToPrinted("-2.35", -2.3456)).toMatchObject({ outcome: "reproduced", rounded: "-2.35" });
    expect(compareToPrinted("-2.3", -2.3456)).toMatchObject({ outcome: "reproduced", rounded: "-2.3" });
    expect(compareToPrinted("-2.346", -2.3456)).toMatchObject({ outcome: "reproduced", rounded: "-2.346" });
    expect(compareToPrinted("-2.34", -2.3456)).toMatchObject({
      outcome: "not_reproduced",
      rounded: "-2.35",
      reason: "rounds to -2.35, printed -2.34",
    });
    expect(compareToPrinted("2.35", -2.3456)).toMatchObject({ outcome: "not_reproduced" }); // sign dropped
    expect(compareToPrinted("0.00", -0.004)).toMatchObject({ outcome: "reproduced" });
    expect(compareToPrinted("-0.00", -0.004)).toMatchObject({ outcome: "reproduced" }); // -0.00 and 0.00 are the same number
  });

  it("half-way values follow the rule, not the binary value", () => {
    expect(compareToPrinted("1.01", 1.005).outcome).toBe("reproduced");
    expect(compareToPrinted("1.00", 1.005).outcome).toBe("not_reproduced");
    expect(compareToPrinted("-0.13", -0.125).outcome).toBe("reproduced");
  });

  it('"<0.001" is reproduced when the rerun p is below 0.001, and not at or above it', () => {
    expect(compareToPrinted("<0.001", 0.000999).outcome).toBe("reproduced");
    expect(compareToPrinted("<0.001", 1e-300).outcome).toBe("reproduced");
    expect(compareToPrinted("<0.001", 0.001).outcome).toBe("not_reproduced");
    expect(compareToPrinted("<0.001", 0.0012)).toMatchObject({
      outcome: "not_reproduced",
      reason: "the rerun's value 0.0012 is not below 0.001",
    });
    expect(compareToPrinted(">0.999", 0.9995).outcome).toBe("reproduced");
    // a printed 0.000 means p rounds to zero at three decimals: below 0.0005
    expect(compareToPrinted("0.000", 0.00049).outcome).toBe("reproduced");
    expect(compareToPrinted("0.000", 0.0005).outcome).toBe("not_reproduced");
  });

  it("a value the rerun could not compute is not reproduced", () => {
    expect(compareToPrinted("1.00", Number.NaN)).toMatchObject({
      outcome: "not_reproduced",
      reason: "the rerun could not compute this value",
    });
  });
});
