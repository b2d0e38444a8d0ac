// The canonical JSON of a synced record decides "duplicate" against raws stored by earlier
// versions of the server, so its text must never change. canonicalJson (a sorted copy through
// the native JSON.stringify) is checked here against the definition written out plainly:
// keys sorted at every depth (UTF-16 order, as Array.prototype.sort), null and absent members
// left out, array holes and nulls written as null, every scalar as JSON.stringify writes it.
import { expect, test } from "vitest";
import { canonicalJson, validateShot } from "~/contract/sync";
import { createRng } from "~/seed/builders";

/** mulberry32, the seed builders' PRNG */
const seededUniform = (seed: number) => createRng(seed).next;

function reference(v: unknown): string | undefined {
  if (v === null || v === undefined) return undefined;
  if (typeof v !== "object") return JSON.stringify(v);
  if (Array.isArray(v)) {
    let out = "[";
    for (let i = 0; i < v.length; i++) out += (i ? "," : "") + (reference(v[i]) ?? "null");
    return out + "]";
  }
  const keys = Object.keys(v).sort();
  let out = "{";
  let first = true;
  for (const k of keys) {
    const x = reference((v as Record<string, unknown>)[k]);
    if (x === undefined) continue;
    out += (first ? "" : ",") + JSON.stringify(k) + ":" + x;
    first = false;
  }
  return out + "}";
}
const expected = (v: unknown) => reference(v) ?? "null";

const KEYS = ["id", "b", "a", "Z", "é", "10", "9", "0", "01", "__proto__", "constructor", "", "readings", "rangesM", "x y", '"q"'];
const STRINGS = ["", "plain", 'with "quotes"', "back\\slash", "line\nbreak", "tab\t", "\u2028\u2029", "ünïcödé", "😀", "\ud800", "</script>"];

function randomValue(rnd: () => number, depth: number): unknown {
  const r = rnd();
  if (depth > 3 || r < 0.35) {
    const s = rnd();
    if (s < 0.15) return null;
    if (s < 0.25) return undefined;
    if (s < 0.5) return (rnd() - 0.5) * 10 ** Math.floor(rnd() * 30 - 10);
    if (s < 0.55) return [0, -0, 1e21, 5e-324, Number.MAX_SAFE_INTEGER, 0.1 + 0.2][Math.floor(rnd() * 6)];
    if (s < 0.65) return rnd() < 0.5;
    return STRINGS[Math.floor(rnd() * STRINGS.length)];
  }
  if (r < 0.6) {
    const n = Math.floor(rnd() * 5);
    const out: unknown[] = [];
    for (let i = 0; i < n; i++) out.push(randomValue(rnd, depth + 1));
    if (rnd() < 0.1) out.length += 2; // holes
    return out;
  }
  const out: Record<string, unknown> = {};
  const n = Math.floor(rnd() * 6);
  for (let i = 0; i < n; i++) {
    const k = KEYS[Math.floor(rnd() * KEYS.length)]!;
    const v = randomValue(rnd, depth + 1);
    if (k === "__proto__") Object.defineProperty(out, k, { value: v, enumerable: true, writable: true, configurable: true });
    else out[k] = v;
  }
  return out;
}

test("canonicalJson writes the same text as the plain definition for 20 000 random values", () => {
  const rnd = seededUniform(42);
  for (let i = 0; i < 20_000; i++) {
    const v = randomValue(rnd, 0);
    expect(canonicalJson(v), JSON.stringify(v)).toBe(expected(v));
  }
});

test("index-like keys, __proto__, holes and scalars at the top come out as the definition says", () => {
  const cases: unknown[] = [
    { 10: "ten", 9: "nine", a: 1, "01": "zero-one" },
    { b: [1, null, undefined, , 3], a: { d: null, c: undefined, e: [] } }, // eslint-disable-line no-sparse-arrays
    JSON.parse('{"__proto__": {"x": 1}, "a": 2}'),
    { fn: () => 1, sym: Symbol("s"), keep: 1 },
    [() => 1, undefined, null],
    null,
    undefined,
    -0,
    "text",
    [],
    {},
  ];
  for (const v of cases) expect(canonicalJson(v)).toBe(expected(v));
  expect(canonicalJson({ 10: 1, 9: 2 })).toBe('{"10":1,"9":2}');
});

test("a validated shot in any key order gives one text, with the absent and null fields left out", () => {
  const shot = {
    id: "6b3f6c0e-2f4b-4c7e-9a55-0d4c1a2b3c4d",
    sessionId: "0e9d8c7b-6a5f-4e3d-8c2b-1a0f9e8d7c6b",
    takenAt: "2026-05-04T09:10:00+02:00",
    targetId: null,
    reference: { method: "tape", distanceM: 25.004, tape: { tapeId: "tape-1", tempC: 21, tensionN: 50, support: "ground", spans: 1 } },
    readings: { rangesM: [25.011, 25.009] },
    reflectancePct: 10,
    illuminanceKlux: 85,
    note: "board in shade",
  };
  const reordered = Object.fromEntries(Object.entries(shot).reverse());
  const a = validateShot(shot);
  const b = validateShot(reordered);
  if (!a.ok || !b.ok) throw new Error("the shot should be valid");
  expect(canonicalJson(a.value)).toBe(canonicalJson(b.value));
  expect(canonicalJson(a.value)).toBe(expected(a.value));
  expect(canonicalJson(a.value)).not.toContain("targetId");
  expect(Object.keys(JSON.parse(canonicalJson(a.value)))).toEqual(["id", "illuminanceKlux", "note", "readings", "reference", "reflectancePct", "sessionId", "takenAt"]);
});
