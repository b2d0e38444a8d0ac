import { expect, test } from "vitest";
import { marginForValues, thinByX } from "./charts";

test("session labels closer than the gap are dropped, the first of a crowd kept (hand-worked)", () => {
  // x = 0, 10, 60, 70, 130 px with a 52 px gap: 0 kept, 10 dropped, 60 kept (60 ≥ 52), 70 dropped, 130 kept
  const kept = thinByX([70, 0, 130, 10, 60], (x) => x, 52);
  expect(kept).toEqual([0, 60, 130]);
});

test("the y margin grows with the longest tick label so a minus sign is never cut off", () => {
  // "−30,000" plus headroom: 1.25 × 29 953 → 37 442 → "37,442" (6 characters) + 1 for the sign → 16 + 7 × 9 = 79 px
  expect(marginForValues([-29953, 2])).toBe(79);
  expect(marginForValues([1.2, -3])).toBe(56);
  expect(marginForValues([Number.NaN, 4], 60)).toBe(60);
});
