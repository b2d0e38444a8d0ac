// A streamed answer (the report's rows, the CSV, a project bundle) goes through
// @react-router/node's writeReadableStreamToWritable. As published (7.18.x) it raced every read
// against one long-lived promise, which kept each chunk it read until the response ended
// (remix-run/react-router#15247): a 226 MB answer held 226 MB. patches/ fixes it (patch-package,
// run by npm's postinstall); this checks the installed copy, in a child with --expose-gc.
import { spawnSync } from "node:child_process";
import { expect, test } from "vitest";

const script = `
const { writeReadableStreamToWritable } = require("@react-router/node");
const { Writable } = require("node:stream");
const MB = 1 << 20;
let i = 0, seen = 0, most = 0;
const body = new ReadableStream({
  pull(c) {
    if (i++ >= 120) return c.close();
    c.enqueue(new Uint8Array(MB).fill(i & 255));
  },
});
// a sink that takes each chunk a tick later, as a socket does
const sink = new Writable({ highWaterMark: 64 * 1024, write(chunk, _e, done) { seen += chunk.length; setImmediate(done); } });
const timer = setInterval(() => { globalThis.gc(); most = Math.max(most, process.memoryUsage().arrayBuffers); }, 5);
writeReadableStreamToWritable(body, sink).then(() => {
  clearInterval(timer);
  globalThis.gc();
  console.log(JSON.stringify({ seen, mostMb: most / MB }));
});
`;

test("a 120 MB stream through the adapter keeps a few chunks in memory, not all of them", () => {
  const r = spawnSync(process.execPath, ["--expose-gc", "-e", script], { encoding: "utf8", cwd: process.cwd() });
  expect(r.stderr).toBe("");
  const out = JSON.parse(r.stdout.trim()) as { seen: number; mostMb: number };
  expect(out.seen).toBe(120 * (1 << 20));
  // unpatched: every chunk read is kept (measured ~120 MB here); patched: the chunks in flight
  expect(out.mostMb).toBeLessThan(24);
});
