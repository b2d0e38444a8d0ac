// Child of scan.bench.ts: its own process so the peak RSS is that of the upload and extraction only.
import { createReadStream, readFileSync } from "node:fs";
import { stat } from "node:fs/promises";
import { availableParallelism, loadavg } from "node:os";
import { Readable } from "node:stream";
import { ScanExtractor } from "~/domain";
import { closeScanPool, readPointCloud, scanWorkerCount, warmScanPool } from "~/scan/point-cloud.server";
import { discard, receiveMultipart } from "~/utils/multipart.server";

const [path, oText, centresText, fileName = "bench.las", decoder] = process.argv.slice(2);
const O = JSON.parse(oText) as [number, number, number];
const centres = JSON.parse(centresText) as [number, number, number][];

// the file as a browser would send it: a multipart body, streamed
const boundary = "----shotbookbench";
const head = `--${boundary}\r\nContent-Disposition: form-data; name="sessionId"\r\n\r\nx\r\n--${boundary}\r\nContent-Disposition: form-data; name="file"; filename="${fileName}"\r\nContent-Type: application/octet-stream\r\n\r\n`;
const tail = `\r\n--${boundary}--\r\n`;
async function* body() {
  yield new TextEncoder().encode(head);
  for await (const chunk of createReadStream(path, { highWaterMark: 1 << 20 })) yield new Uint8Array(chunk as Buffer);
  yield new TextEncoder().encode(tail);
}
const size = (await stat(path)).size;
const request = new Request("http://localhost/api/scans", {
  method: "POST",
  body: Readable.toWeb(Readable.from(body())) as ReadableStream,
  headers: { "Content-Type": `multipart/form-data; boundary=${boundary}`, "Content-Length": String(head.length + size + tail.length) },
  duplex: "half",
} as RequestInit);
let t = performance.now();
const form = await receiveMultipart(request, { maxBytes: 512 * 1024 * 1024, maxFiles: 1 });
if ("error" in form) throw new Error(form.error);
const uploadS = (performance.now() - t) / 1000;

const ex = new ScanExtractor(centres.map((c, i) => ({ id: `b${i}`, t: [c[0] - O[0], c[1] - O[1], c[2] - O[2]] })));
// the worker threads start first, timed apart (from the sources each also loads tsx)
const cpuW = process.cpuUsage();
t = performance.now();
if (fileName.endsWith(".laz")) await warmScanPool();
const warmS = (performance.now() - t) / 1000;
const warmCpu = process.cpuUsage(cpuW);
const warmCpuS = (warmCpu.user + warmCpu.system) / 1e6;
const load0 = loadavg()[0];
t = performance.now();
// CPU time too: on a shared machine the wall time also counts other processes' turns
const cpu0 = process.cpuUsage();
await readPointCloud(form.files[0].path, O, (xyz, n, seen) => ex.add(xyz, n, seen), { near: ex.boxes(), decoder: decoder === "laz-perf" ? "laz-perf" : undefined });
const extractS = (performance.now() - t) / 1000;
const cpu = process.cpuUsage(cpu0);
const extractCpuS = (cpu.user + cpu.system) / 1e6;
const res = ex.results();
let worstMm = 0;
res.forEach((r, i) => {
  const d = Math.hypot(centres[i][0] - O[0], centres[i][1] - O[1], centres[i][2] - O[2]);
  // the bench boards carry offsets i − 6 mm
  if (r.rangeM != null) worstMm = Math.max(worstMm, Math.abs((r.rangeM - d) * 1000 - (i - 6)));
});
await discard(form);
await closeScanPool();
console.log(
  JSON.stringify({
    warmS,
    warmCpuS,
    threads: scanWorkerCount(),
    cores: availableParallelism(),
    load: load0,
    uploadS,
    extractS,
    extractCpuS,
    found: res.filter((r) => r.status === "found").length,
    worstMm,
    maxRssKb: peakRssKb(),
  }),
);

/** This process's peak RSS in kB. Linux's getrusage (process.resourceUsage().maxRSS) carries the
 * parent's RSS at fork over exec: in a whole `npm run bench`, whose process held ~450 MB by then,
 * it said 451 MB for every file, where the same children spawned from a small process peak at
 * 130–230 MB; /proc/self/status VmHWM counts this process's own memory only. */
function peakRssKb(): number {
  try {
    const m = /VmHWM:\s+(\d+)\s*kB/.exec(readFileSync("/proc/self/status", "utf8"));
    if (m) return Number(m[1]);
  } catch {
    // not Linux: getrusage is the best there is
  }
  return process.resourceUsage().maxRSS;
}
