import { expect, test } from "vitest";
import { isImplausible } from "./plausibility.ts";

// ranging.md §9: |error| above 1 000 mm with a reference above 1 m is flagged.
test("2.0016 m typed for 20.016 m is flagged as implausible", () => {
  const errorMm = (2.0016 - 20.016) * 1000;
  expect(isImplausible(errorMm, 20.016)).toBe(true);
});

test("errors within a metre, or references of a metre or less, are not flagged", () => {
  expect(isImplausible(999.9, 50)).toBe(false);
  expect(isImplausible(-1000, 50)).toBe(false);
  expect(isImplausible(1500, 1)).toBe(false);
  expect(isImplausible(-1000.1, 1.01)).toBe(true);
});
