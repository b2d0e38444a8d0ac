// Retry-After as RFC 9110 §10.2.3 defines it: delay-seconds or an HTTP-date.
import { expect, test } from "vitest";
import { retryAfterMs } from "./sync";

const res = (v?: string) => new Response(null, { status: 503, headers: v === undefined ? {} : { "Retry-After": v } });

test("Retry-After in seconds or as an HTTP date becomes the wait in ms; nonsense is ignored", () => {
  expect(retryAfterMs(res("3"))).toBe(3000);
  expect(retryAfterMs(res(" 0 "))).toBe(0);
  const now = Date.parse("2026-05-04T08:00:00Z");
  expect(retryAfterMs(res("Mon, 04 May 2026 08:00:12 GMT"), now)).toBe(12_000);
  expect(retryAfterMs(res("Mon, 04 May 2026 07:59:00 GMT"), now)).toBe(0); // already past
  expect(retryAfterMs(res("86400"))).toBe(300_000); // capped: a tablet never waits hours on one answer
  expect(retryAfterMs(res("soon"))).toBeNull();
  expect(retryAfterMs(res())).toBeNull();
});
